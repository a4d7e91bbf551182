// Modulus search; see modulus_finder.hpp. Candidate windows are stress bands of
// a fixed share of the top stress, stepped by a quarter of their width.
#include "modulus_finder.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

#include "least_squares.hpp"

namespace tensile {

namespace {

constexpr std::size_t min_points = 8;

// Standard error of a slope: residual SD over √Σ(x − mean x)²; the fit has
// that sum already (x is the stress here).
double slope_se(const LineFit& f) { return f.x_spread > 0 ? f.residual_sd / std::sqrt(f.x_spread) : INFINITY; }

struct Candidate {
    double low, high;
    std::size_t first, last;
    LineFit line;       // strain on stress
    bool straight;      // its two halves agree in slope
    [[nodiscard]] double E() const { return 1.0 / line.slope; }
    // The low end of E's two-standard-error interval: steepness that noise
    // alone is unlikely to have made.
    [[nodiscard]] double E_low() const { return 1.0 / (line.slope + 2.0 * slope_se(line)); }
};

std::size_t first_at_or_above(std::span<const double> running_max, double value) {
    return static_cast<std::size_t>(std::lower_bound(running_max.begin(), running_max.end(), value) -
                                    running_max.begin());
}

std::optional<LineFit> fit_range(std::span<const double> strain, std::span<const double> stress, std::size_t first,
                                 std::size_t last) {
    return fit_line(stress.subspan(first, last - first), strain.subspan(first, last - first));
}

std::optional<Candidate> fit_band(std::span<const double> strain, std::span<const double> stress,
                                  std::span<const double> running_max, double low, double high, double tolerance) {
    const std::size_t first = first_at_or_above(running_max, low);
    const std::size_t last = first_at_or_above(running_max, high);
    if (last <= first || last - first < min_points) return std::nullopt;
    // The band and, when both have enough points, its halves, fitted together.
    const std::size_t mid = first_at_or_above(running_max, 0.5 * (low + high));
    const bool halves = mid - first >= min_points / 2 && last - mid >= min_points / 2;
    SplitFit fits;
    if (halves)
        fits = fit_line_split(stress.subspan(first, last - first), strain.subspan(first, last - first), mid - first);
    else
        fits.whole = fit_range(strain, stress, first, last);
    const auto& line = fits.whole;
    if (!line || !(line->slope > 0)) return std::nullopt;
    Candidate c{low, high, first, last, *line, false};

    // Straightness: the halves' slopes differ by less than the tolerance, or by
    // less than three standard errors when noise is what separates them.
    if (halves) {
        const auto& a = fits.first;
        const auto& b = fits.second;
        if (a && b && a->slope > 0 && b->slope > 0) {
            const double se_a = slope_se(*a);
            const double se_b = slope_se(*b);
            const double diff = std::abs(a->slope - b->slope);
            c.straight = diff <= tolerance * line->slope || diff <= 3.0 * std::hypot(se_a, se_b);
        }
    }
    return c;
}

ModulusFit to_fit(const Candidate& c) {
    ModulusFit f;
    f.E_MPa = c.E();
    f.toe = c.line.intercept;
    f.r2 = c.line.r2;
    f.cv_pct = c.line.slope_cv_pct();
    f.residual_sd = c.line.residual_sd * f.E_MPa;
    f.low_MPa = c.low;
    f.high_MPa = c.high;
    f.first = c.first;
    f.last = c.last;
    return f;
}

}  // namespace

std::optional<ModulusFit> find_modulus(std::span<const double> strain, std::span<const double> stress,
                                       std::span<const double> running_max, const Profile& profile) {
    if (running_max.empty()) return std::nullopt;
    const double tolerance = profile.modulus_slope_tolerance;
    if (profile.modulus_window) {
        auto c = fit_band(strain, stress, running_max, profile.modulus_window->low_MPa,
                          profile.modulus_window->high_MPa, tolerance);
        if (!c) return std::nullopt;
        return to_fit(*c);
    }

    const double top = running_max.back();
    const double base = std::max(0.0, running_max.front());
    const double width = profile.modulus_window_share * top;
    if (!(top > base + width)) return std::nullopt;
    const double step = width / 4.0;

    std::vector<Candidate> bands;
    for (double low = base; low + width <= top; low += step)
        if (auto c = fit_band(strain, stress, running_max, low, low + width, tolerance)) bands.push_back(*c);
    if (bands.empty()) return std::nullopt;

    // The steepest straight band that also fits as well as the profile asks;
    // failing that, the steepest straight one; failing that, the best-fitting
    // one. Another band takes its place only when even the low end of its
    // confidence interval is twice as steep. A plastic stretch with linear
    // hardening (a tangent modulus of a few % of E, common practice) is
    // straight and fits well over its long strain span, yet is no modulus;
    // on a curve that bends from the first MPa (annealed copper) no band is
    // straight and the best-fitting one lies high in the plastic part. A
    // noisy band at the foot, steeper by chance, is seldom twice as steep at
    // the low end of its interval.
    auto pick = [&](auto&& accept, auto&& score) {
        std::size_t best = bands.size();
        for (std::size_t i = 0; i < bands.size(); ++i)
            if (accept(bands[i]) && (best == bands.size() || score(bands[i]) > score(bands[best]))) best = i;
        return best;
    };
    const std::size_t none = bands.size();
    auto E = [](const Candidate& c) { return c.E(); };
    auto E_low = [](const Candidate& c) { return c.E_low(); };
    auto r2 = [](const Candidate& c) { return c.line.r2; };
    auto straight = [](const Candidate& c) { return c.straight; };
    auto any = [](const Candidate&) { return true; };
    std::size_t best = pick([&](const Candidate& c) { return c.straight && c.line.r2 >= profile.modulus_min_r2; }, E);
    if (best == none) best = pick(straight, E);
    if (best == none) best = pick(any, r2);
    std::size_t steep = pick(straight, E_low);
    if (steep == none) steep = pick(any, E_low);
    if (bands[steep].E_low() > 2.0 * bands[best].E()) best = steep;

    // Widen to contiguous straight neighbours of nearly the same slope, which
    // averages the noise that made one band the steepest.
    const double keep = (1.0 - tolerance) * bands[best].E();
    std::size_t lo = best, hi = best;
    while (lo > 0 && bands[lo - 1].straight && bands[lo - 1].E() >= keep) --lo;
    while (hi + 1 < bands.size() && bands[hi + 1].straight && bands[hi + 1].E() >= keep) ++hi;
    if (lo == hi) return to_fit(bands[best]);
    auto merged = fit_band(strain, stress, running_max, bands[lo].low, bands[hi].high, tolerance);
    if (!merged) return to_fit(bands[best]);
    return to_fit(*merged);
}

}  // namespace tensile
