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

namespace {

// One fit's running sums, finished as fit_line finishes them.
struct Sums {
    double mx = 0, my = 0, sxx = 0, sxy = 0, syy = 0, sse = 0, slope = 0, intercept = 0;
    std::size_t n = 0;
    void mean(double x, double y) {
        mx += x;
        my += y;
    }
    void means_done() {
        mx /= static_cast<double>(n);
        my /= static_cast<double>(n);
    }
    void spread(double x, double y) {
        const double dx = x - mx, dy = y - my;
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    bool line_done() {
        if (!(sxx > 0)) return false;
        slope = sxy / sxx;
        intercept = my - slope * mx;
        return true;
    }
    void residual(double x, double y) {
        const double r = y - intercept - slope * x;
        sse += r * r;
    }
    [[nodiscard]] LineFit fit() const {
        LineFit f;
        f.count = n;
        f.x_spread = sxx;
        f.slope = slope;
        f.intercept = intercept;
        f.r2 = syy > 0 ? 1.0 - sse / syy : 1.0;
        f.residual_sd = std::sqrt(sse / static_cast<double>(n - 2));
        return f;
    }
};

}  // namespace

SplitFit fit_line_split(std::span<const double> x, std::span<const double> y, std::size_t mid) {
    const std::size_t n = x.size() < y.size() ? x.size() : y.size();
    if (mid > n) mid = n;
    if (n < 3 || mid < 3 || n - mid < 3) {  // a part too small to fit: each the plain way
        return {fit_line(x.first(n), y.first(n)), fit_line(x.first(mid), y.first(mid)),
                fit_line(x.subspan(mid, n - mid), y.subspan(mid, n - mid))};
    }
    Sums w, a, b;
    w.n = n;
    a.n = mid;
    b.n = n - mid;
    // Means: the whole range's sums up to mid are the first half's sums.
    for (std::size_t i = 0; i < mid; ++i) w.mean(x[i], y[i]);
    a.mx = w.mx;
    a.my = w.my;
    for (std::size_t i = mid; i < n; ++i) {
        w.mean(x[i], y[i]);
        b.mean(x[i], y[i]);
    }
    w.means_done();
    a.means_done();
    b.means_done();
    for (std::size_t i = 0; i < mid; ++i) {
        w.spread(x[i], y[i]);
        a.spread(x[i], y[i]);
    }
    for (std::size_t i = mid; i < n; ++i) {
        w.spread(x[i], y[i]);
        b.spread(x[i], y[i]);
    }
    const bool wl = w.line_done(), al = a.line_done(), bl = b.line_done();
    // Residuals, where there is a line (a failed fit's terms are unused).
    for (std::size_t i = 0; i < mid; ++i) {
        w.residual(x[i], y[i]);
        a.residual(x[i], y[i]);
    }
    for (std::size_t i = mid; i < n; ++i) {
        w.residual(x[i], y[i]);
        b.residual(x[i], y[i]);
    }
    SplitFit out;
    if (wl) out.whole = w.fit();
    if (al) out.first = a.fit();
    if (bl) out.second = b.fit();
    return out;
}

}  // namespace tensile
