// Material curve; see material.hpp. Solvers are bracketed (bisection or
// safeguarded Newton) so they always end; make_curve() refuses specs whose
// curve would have no yield, no maximum or no fracture, naming the field.
#include "material.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <functional>
#include <string>

namespace tensile::sim {

const char* name_of(HardeningLaw law) {
    switch (law) {
        case HardeningLaw::hill: return "hill";
        case HardeningLaw::hollomon: return "hollomon";
        case HardeningLaw::voce: return "voce";
    }
    return "?";
}

namespace {

// Root of an increasing g on [lo, hi] with g(lo) <= 0 <= g(hi): Newton steps
// where they stay inside the bracket, bisection otherwise.
double solve_increasing(const std::function<double(double)>& g, const std::function<double(double)>& dg,
                        double lo, double hi) {
    double x = 0.5 * (lo + hi);
    for (int i = 0; i < 200; ++i) {
        const double gx = g(x);
        if (gx == 0) return x;
        if (gx < 0) lo = x; else hi = x;
        const double d = dg ? dg(x) : 0.0;
        double next = (d > 0) ? x - gx / d : 0.5 * (lo + hi);
        if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
        if (std::abs(next - x) <= 1e-15 * std::max(1.0, std::abs(x)) || hi - lo <= 1e-16 * std::max(1.0, std::abs(hi)))
            return next;
        x = next;
    }
    return x;
}

double bisect(const std::function<double(double)>& g, double lo, double hi) {
    return solve_increasing(g, nullptr, lo, hi);
}

// Serration heights: a fixed hash of the serration index, so the curve is a
// pure function of the spec (same plateau whatever the run's seed).
double serration_height(std::int64_t k) {
    std::uint64_t z = static_cast<std::uint64_t>(k) + 0x9E3779B97F4A7C15ull;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    z ^= z >> 31;
    return 0.5 + 0.5 * static_cast<double>(z >> 11) / 9007199254740992.0;
}

double elastic_engineering(double E, double strain) {
    // Hooke's law in true terms, expressed in engineering stress and strain.
    return E * std::log1p(strain) / (1.0 + strain);
}

bool positive(double v) { return std::isfinite(v) && v > 0; }
std::string num(double v) { return std::to_string(v); }

}  // namespace

double MaterialCurve::law_true_stress_MPa(double eps) const {
    const MaterialSpec& s = spec_;
    const double E = s.E_MPa;
    if (!(eps > 0)) return 0;
    switch (s.law) {
        case HardeningLaw::hollomon:
            return std::min(E * eps, s.hollomon_K_MPa * std::pow(eps, s.hollomon_n));
        case HardeningLaw::hill: {
            const double a = 0.002 / std::pow(s.hill_sigma02_MPa, s.hill_n);
            auto g = [&](double sg) { return sg / E + a * std::pow(sg, s.hill_n) - eps; };
            auto dg = [&](double sg) { return 1.0 / E + a * s.hill_n * std::pow(sg, s.hill_n - 1); };
            return solve_increasing(g, dg, 0.0, E * eps);
        }
        case HardeningLaw::voce: {
            const double s0 = s.voce_sigma0_MPa, Q = s.voce_Q_MPa, b = s.voce_b;
            if (E * eps <= s0) return E * eps;
            auto g = [&](double sg) { return sg / E - std::log1p(-(sg - s0) / Q) / b - eps; };
            auto dg = [&](double sg) { return 1.0 / E + 1.0 / (b * (Q - (sg - s0))); };
            return solve_increasing(g, dg, s0, std::min(E * eps, s0 + Q * (1 - 1e-15)));
        }
    }
    return 0;
}

double MaterialCurve::homogeneous_stress_MPa(double strain) const {
    const double true_strain = std::log1p(strain) - shift_true_;
    return law_true_stress_MPa(true_strain) / (1.0 + strain);
}

double MaterialCurve::stress_MPa(double strain) const {
    strain = std::clamp(strain, 0.0, fracture_strain_ > 0 ? fracture_strain_ : strain);
    double base;
    if (spec_.yield_point && strain <= hardening_start_) {
        const YieldPoint& y = *spec_.yield_point;
        if (strain <= upper_yield_strain_) return elastic_engineering(spec_.E_MPa, strain);
        const double after = strain - upper_yield_strain_;
        if (after <= y.drop_strain) return y.ReH_MPa + (y.ReL_MPa - y.ReH_MPa) * after / y.drop_strain;
        // Sawtooth: slow rise over 90 % of a period, sharp fall over the last 10 %.
        const double x = (after - y.drop_strain) / serration_period_;
        const auto k = static_cast<std::int64_t>(std::floor(x));
        const double f = x - static_cast<double>(k);
        const double shape = f < 0.9 ? f / 0.9 : (1.0 - f) / 0.1;
        return y.ReL_MPa * (1.0 + y.serration_share * serration_height(k) * shape);
    }
    base = homogeneous_stress_MPa(strain);
    if (strain > uniform_strain_ && fracture_strain_ > uniform_strain_) {
        // Necking: the homogeneous stress times a loss that starts with zero slope
        // at Fm (so the maximum stays where Considère puts it) and reaches
        // neck_softening at fracture.
        const double u = (strain - uniform_strain_) / (fracture_strain_ - uniform_strain_);
        base *= 1.0 - spec_.neck_softening * std::pow(u, spec_.neck_exponent);
    }
    return base;
}

Result<MaterialCurve> make_curve(const MaterialSpec& s) {
    const std::string who = s.name.empty() ? std::string("material") : "material '" + s.name + "'";
    if (!positive(s.E_MPa)) return Error{who + ": modulus E must be a positive stress in MPa, got " + num(s.E_MPa)};
    switch (s.law) {
        case HardeningLaw::hill:
            if (!positive(s.hill_sigma02_MPa)) return Error{who + ": Hill σ0.2 must be a positive stress in MPa, got " + num(s.hill_sigma02_MPa)};
            if (!(s.hill_n > 1 && s.hill_n < 100)) return Error{who + ": Hill exponent n must be between 1 and 100, got " + num(s.hill_n)};
            break;
        case HardeningLaw::hollomon:
            if (!positive(s.hollomon_K_MPa)) return Error{who + ": Hollomon K must be a positive stress in MPa, got " + num(s.hollomon_K_MPa)};
            if (!(s.hollomon_n > 0 && s.hollomon_n < 1)) return Error{who + ": Hollomon exponent n must be between 0 and 1, got " + num(s.hollomon_n)};
            break;
        case HardeningLaw::voce:
            if (!positive(s.voce_sigma0_MPa)) return Error{who + ": Voce σ0 must be a positive stress in MPa, got " + num(s.voce_sigma0_MPa)};
            if (!positive(s.voce_Q_MPa)) return Error{who + ": Voce Q must be a positive stress in MPa, got " + num(s.voce_Q_MPa)};
            if (!positive(s.voce_b)) return Error{who + ": Voce b must be positive, got " + num(s.voce_b)};
            break;
    }
    if (!positive(s.A_pct)) return Error{who + ": elongation after fracture A must be a positive percentage, got " + num(s.A_pct)};
    if (!(s.neck_softening > 0 && s.neck_softening < 0.95))
        return Error{who + ": neck softening must be a share between 0 and 0.95, got " + num(s.neck_softening)};
    if (!(s.neck_exponent > 1 && s.neck_exponent < 20))
        return Error{who + ": neck exponent must be between 1 and 20, got " + num(s.neck_exponent)};

    MaterialCurve c;
    c.spec_ = s;
    double start = 1e-5;
    if (s.yield_point) {
        const YieldPoint& y = *s.yield_point;
        if (!positive(y.ReL_MPa)) return Error{who + ": lower yield ReL must be a positive stress in MPa, got " + num(y.ReL_MPa)};
        if (!(y.ReH_MPa > y.ReL_MPa)) return Error{who + ": upper yield ReH must be above ReL (" + num(y.ReL_MPa) + " MPa), got " + num(y.ReH_MPa)};
        if (!(y.ReH_MPa < 0.02 * s.E_MPa)) return Error{who + ": upper yield ReH must be below 2 % of E, got " + num(y.ReH_MPa)};
        if (!positive(y.Ae_pct) || y.Ae_pct > 20) return Error{who + ": yield-point extension Ae must be a percentage between 0 and 20, got " + num(y.Ae_pct)};
        if (!(y.drop_strain > 0 && y.drop_strain < 0.5 * y.Ae_pct / 100))
            return Error{who + ": yield drop strain must be positive and less than half of Ae, got " + num(y.drop_strain)};
        if (!(y.serration_share >= 0 && y.serration_share < 0.05))
            return Error{who + ": serration share must be between 0 and 0.05, got " + num(y.serration_share)};
        if (!positive(y.serration_strain)) return Error{who + ": serration strain must be positive, got " + num(y.serration_strain)};
        c.upper_yield_strain_ = bisect([&](double e) { return elastic_engineering(s.E_MPa, e) - y.ReH_MPa; }, 0.0, 0.5);
        c.hardening_start_ = c.upper_yield_strain_ + y.Ae_pct / 100;
        const double plateau = y.Ae_pct / 100 - y.drop_strain;
        c.serration_period_ = plateau / std::max(1.0, std::round(plateau / y.serration_strain));
        // Shift the law along true strain so that it meets ReL where the plateau ends.
        const double target_true = y.ReL_MPa * (1 + c.hardening_start_);
        if (c.law_true_stress_MPa(10.0) <= target_true)
            return Error{who + ": the hardening law never reaches ReL; raise its strength or lower ReL"};
        const double x = bisect([&](double e) { return c.law_true_stress_MPa(e) - target_true; }, 0.0, 10.0);
        const double h = 1e-6;
        const double slope = (c.law_true_stress_MPa(x + h) - c.law_true_stress_MPa(x)) / h;
        if (slope > 0.5 * s.E_MPa)
            return Error{who + ": ReL is below the stress where the hardening law yields, so hardening would restart on the elastic line; raise ReL or lower the law's strength"};
        c.shift_true_ = std::log1p(c.hardening_start_) - x;
        start = c.hardening_start_;
    }

    // Maximum force: a geometric scan, then golden-section refinement around
    // the best sample. For a law in true terms this is where dσ/dε = σ (Considère).
    auto hom = [&](double e) { return c.homogeneous_stress_MPa(e); };
    const int n = 4000;
    const double top = 4.0;
    int best = 0;
    double best_v = -1;
    std::vector<double> grid(n);
    for (int i = 0; i < n; ++i) {
        grid[i] = start * std::pow(top / start, static_cast<double>(i) / (n - 1));
        const double v = hom(grid[i]);
        if (v > best_v) { best_v = v; best = i; }
    }
    if (best == n - 1) return Error{who + ": the hardening law has no force maximum below 400 % strain"};
    if (best == 0 && s.yield_point)
        return Error{who + ": the hardening law is already past its force maximum where the Lüders plateau ends; make Ae shorter or the law harden more"};
    // Refine by bisection on the sign of a central difference: a flat maximum is
    // found to ~1e-11 in strain this way (comparing values alone stops at ~1e-8).
    double a = grid[std::max(0, best - 1)], b = grid[best + 1];
    const double h = 1e-6;
    for (int i = 0; i < 200 && b - a > 1e-15; ++i) {
        const double m = 0.5 * (a + b);
        if (hom(m + h) - hom(m - h) > 0) a = m; else b = m;
    }
    c.uniform_strain_ = 0.5 * (a + b);

    // Fracture strain from A: A/100 = ε_f − σ(ε_f)/E with σ(ε_f) = hom(ε_f)·(1 − softening).
    const double keep = 1 - s.neck_softening;
    auto permanent = [&](double e) { return e - hom(e) * keep / s.E_MPa; };
    const double least = permanent(c.uniform_strain_);
    if (!(s.A_pct / 100 > least))
        return Error{who + ": elongation after fracture A must be above " + num(100 * least) +
                     " % for this law (it necks at " + num(100 * c.uniform_strain_) + " % strain), got " + num(s.A_pct)};
    if (permanent(top) < s.A_pct / 100) return Error{who + ": elongation after fracture A is beyond 400 %, got " + num(s.A_pct)};
    c.fracture_strain_ = bisect([&](double e) { return permanent(e) - s.A_pct / 100; }, c.uniform_strain_, top);
    return c;
}

CurveTable::CurveTable(const MaterialCurve& curve, std::size_t points) {
    max_strain_ = curve.fracture_strain();
    step_ = max_strain_ / static_cast<double>(points - 1);
    stress_.resize(points);
    for (std::size_t i = 0; i < points; ++i) stress_[i] = curve.stress_MPa(static_cast<double>(i) * step_);
}

double CurveTable::stress_MPa(double strain) const {
    if (!(strain > 0)) return 0;
    const double x = strain / step_;
    const auto i = static_cast<std::size_t>(x);
    if (i + 1 >= stress_.size()) return stress_.back();
    const double f = x - static_cast<double>(i);
    return stress_[i] + f * (stress_[i + 1] - stress_[i]);
}

double CurveTable::slope_MPa(double strain) const {
    const double x = std::max(0.0, strain) / step_;
    std::size_t i = static_cast<std::size_t>(x);
    if (i + 1 >= stress_.size()) i = stress_.size() - 2;
    return (stress_[i + 1] - stress_[i]) / step_;
}

}  // namespace tensile::sim
