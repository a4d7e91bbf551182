// Two-pass linear least squares; see least_squares.hpp.
#include "least_squares.hpp"

#include <cmath>

namespace tensile {

double LineFit::slope_cv_pct() const {
    if (count <= 2 || r2 <= 0) return 0;
    return 100.0 * std::sqrt(std::max(0.0, 1.0 / r2 - 1.0) / static_cast<double>(count - 2));
}

std::optional<LineFit> fit_line(std::span<const double> x, std::span<const double> y) {
    const std::size_t n = x.size() < y.size() ? x.size() : y.size();
    if (n < 3) return std::nullopt;
    double mx = 0, my = 0;
    for (std::size_t i = 0; i < n; ++i) {
        mx += x[i];
        my += y[i];
    }
    mx /= static_cast<double>(n);
    my /= static_cast<double>(n);
    double sxx = 0, sxy = 0, syy = 0;
    for (std::size_t i = 0; i < n; ++i) {
        const double dx = x[i] - mx, dy = y[i] - my;
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    if (!(sxx > 0)) return std::nullopt;
    LineFit f;
    f.count = n;
    f.x_spread = sxx;
    f.slope = sxy / sxx;
    f.intercept = my - f.slope * mx;
    double sse = 0;  // a third pass: no cancellation, as NIST StRD asks
    for (std::size_t i = 0; i < n; ++i) {
        const double r = y[i] - f.intercept - f.slope * x[i];
        sse += r * r;
    }
    f.r2 = syy > 0 ? 1.0 - sse / syy : 1.0;
    f.residual_sd = std::sqrt(sse / static_cast<double>(n - 2));
    return f;
}

}  // namespace tensile
