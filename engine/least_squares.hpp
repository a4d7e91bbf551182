// Straight-line least squares y = intercept + slope·x with the statistics the
// modulus report needs (r², residual SD, ASTM E111 slope coefficient of
// variation). Two-pass (means first) for accuracy; checked against NIST StRD.
#pragma once

#include <cstddef>
#include <optional>
#include <span>

namespace tensile {

struct LineFit {
    double intercept = 0;
    double slope = 0;
    double r2 = 0;
    double residual_sd = 0;
    double x_spread = 0;  // Σ(x − mean x)², for the slope's standard error
    std::size_t count = 0;

    // ASTM E111 style: V1 = 100·√((1/r² − 1)/(K − 2)), in %.
    [[nodiscard]] double slope_cv_pct() const;
};

// Fits over x[i], y[i] for i in [first, last). Empty when fewer than 3 points
// or when x does not vary.
std::optional<LineFit> fit_line(std::span<const double> x, std::span<const double> y);

// The fits over [0, n), [0, mid) and [mid, n) at once, each exactly the one
// fit_line gives for its range (the same sums in the same order). Each of
// fit_line's sums waits on its previous addition, so three fits walked side
// by side take about the time of one; the modulus search asks for a range
// and its two halves for every candidate window.
struct SplitFit {
    std::optional<LineFit> whole, first, second;
};
SplitFit fit_line_split(std::span<const double> x, std::span<const double> y, std::size_t mid);

}  // namespace tensile
