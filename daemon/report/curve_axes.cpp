// Axes and thinning of a stress–strain curve; see curve_axes.hpp.
#include "curve_axes.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace tensile::report {

namespace {

// A tick step of 1, 2 or 5 × 10^k giving about `ticks` intervals.
double nice_step(double span, int ticks) {
    const double raw = span / ticks;
    const double p = std::pow(10.0, std::floor(std::log10(raw)));
    for (double m : {1.0, 2.0, 5.0, 10.0})
        if (m * p >= raw) return m * p;
    return 10 * p;
}

}  // namespace

std::string tick_label(double v) {
    char b[32];
    std::snprintf(b, sizeof b, "%g", std::abs(v) < 1e-9 ? 0.0 : v);
    return b;
}

CurveAxes plan_curve(const std::vector<CurvePoint>& curve, std::size_t max_points) {
    std::vector<CurvePoint> pts;
    for (const auto& p : curve)
        if (std::isfinite(p.strain_pct) && std::isfinite(p.stress_MPa)) pts.push_back(p);
    CurveAxes a;
    if (pts.empty()) return a;
    double x_max = 0, y_max = 0, x_min = 0, y_min = 0;
    for (const auto& p : pts) {
        x_max = std::max(x_max, p.strain_pct);
        y_max = std::max(y_max, p.stress_MPa);
        x_min = std::min(x_min, p.strain_pct);
        y_min = std::min(y_min, p.stress_MPa);
    }
    // A little negative strain (noise, the toe) should not push the axis below zero.
    if (x_min < 0 && -x_min < 0.03 * x_max) x_min = 0;
    if (y_min < 0 && -y_min < 0.03 * y_max) y_min = 0;
    if (x_max - x_min <= 0) x_max = x_min + 1;
    if (y_max - y_min <= 0) y_max = y_min + 1;
    a.x_step = nice_step(x_max - x_min, 8);
    a.y_step = nice_step(y_max - y_min, 6);
    a.x_max = std::ceil(x_max / a.x_step) * a.x_step;
    a.y_max = std::ceil(y_max / a.y_step) * a.y_step;
    a.x_min = std::floor(x_min / a.x_step) * a.x_step;
    a.y_min = std::floor(y_min / a.y_step) * a.y_step;

    const std::size_t stride = std::max<std::size_t>(1, (pts.size() + max_points - 1) / std::max<std::size_t>(1, max_points));
    for (std::size_t i = 0; i < pts.size(); i += stride) {
        std::size_t best = i;
        for (std::size_t k = i; k < std::min(pts.size(), i + stride); ++k)
            if (pts[k].stress_MPa > pts[best].stress_MPa) best = k;
        a.points.push_back(pts[best]);
    }
    return a;
}

}  // namespace tensile::report
