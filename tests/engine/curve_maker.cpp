// Sampled test curves; see curve_maker.hpp.
#include "curve_maker.hpp"

#include <cmath>
#include <random>

namespace tensile::testing {

namespace {
// Solves g(σ) = target for increasing g by bisection on [0, hi].
double solve_increasing(const std::function<double(double)>& g, double target, double hi) {
    double lo = 0;
    while (g(hi) < target) hi *= 2;
    for (int k = 0; k < 200 && hi - lo > 1e-12 * hi; ++k) {
        const double mid = 0.5 * (lo + hi);
        (g(mid) < target ? lo : hi) = mid;
    }
    return 0.5 * (lo + hi);
}
}  // namespace

StressOfStrain hill_curve(double E, double sigma02, double n) {
    return [=](double e) {
        if (e <= 0) return E * e;
        return solve_increasing([&](double s) { return s / E + 0.002 * std::pow(s / sigma02, n); }, e, sigma02);
    };
}

StressOfStrain hollomon_curve(double E, double K, double n) {
    return [=](double e) {
        if (e <= 0) return E * e;
        const double et = std::log1p(e);
        const double st = solve_increasing([&](double s) { return s / E + std::pow(s / K, 1.0 / n); }, et, K);
        return st / (1.0 + e);
    };
}

StressOfStrain yield_point_curve(double E, double ReH, double ReL, double Ae, double hardening_K,
                                 double hardening_n) {
    return [=](double e) {
        const double ey = ReH / E;
        if (e <= ey) return E * e;
        const double drop_end = ey + 0.0002;
        const double transient = ReL - 0.4 * (ReH - ReL);
        if (e <= drop_end) return ReH + (transient - ReH) * (e - ey) / (drop_end - ey);
        const double plateau_end = ey + Ae;
        if (e <= plateau_end) {
            const double back = std::min(1.0, (e - drop_end) / 0.001);  // transient recovers in 0.1 %
            const double serration = 0.004 * ReL * std::sin(2 * M_PI * (e - drop_end) / 0.0015);
            return transient + back * (ReL - transient) + back * serration;
        }
        return ReL + hardening_K * std::pow(e - plateau_end, hardening_n);
    };
}

std::vector<Frame> make_run(const StressOfStrain& curve, const RigSettings& rig) {
    std::mt19937_64 rng(rig.seed);
    std::normal_distribution<double> gauss(0.0, 1.0);
    std::vector<Frame> frames;
    const double dt = 1.0 / rig.rate_hz;

    // Start at the strain that gives the preload.
    double e = 0;
    if (rig.preload_MPa > 0)
        while (curve(e) < rig.preload_MPa) e += 1e-7;
    double t = 0, crosshead_plastic = 0, hold_left = rig.hold_s, relax = 0;
    bool removed = false, broken = false;
    double break_t = 0, break_force = 0;
    const double end = rig.fracture_strain > 0 ? rig.fracture_strain : rig.end_strain;
    while (true) {
        const double stress = curve(e);
        double force = stress * rig.S0_mm2 * (1.0 - relax);
        if (broken) {
            const double share = std::max(0.0, 1.0 - (t - break_t) / 0.002);  // gone within 2 ms
            force = break_force * share + 0.002 * break_force;
        }
        Frame f;
        f.time_s = t;
        f.force_N = force + gauss(rng) * (rig.force_noise_share * std::abs(force) + rig.force_noise_floor_N);
        const double seat = rig.toe_mm * (1.0 - std::exp(-force / (0.03 * rig.S0_mm2 * 100.0)));
        if (!removed)
            f.extension_mm = e * rig.L0_mm + seat + gauss(rng) * rig.extension_noise_mm;
        if (rig.compliance_mm_per_N > 0)
            f.crosshead_mm = e * rig.Lc_mm + rig.compliance_mm_per_N * force + 2.0 * seat + crosshead_plastic;
        frames.push_back(f);
        if (broken && t - break_t > 0.05) break;
        t += dt;

        if (rig.remove_extensometer_at > 0 && !removed && e >= rig.remove_extensometer_at) {
            removed = true;
        }
        if (removed && hold_left > 0) {  // frame held: strain fixed, force relaxes slightly
            hold_left -= dt;
            relax = 0.01 * (1.0 - std::exp(-(rig.hold_s - hold_left) / 2.0));
            continue;
        }
        relax *= 0.995;
        if (broken) continue;
        e += (e < rig.switch_strain ? rig.elastic_rate_per_s : rig.plastic_rate_per_s) * dt;
        if (e >= end) {
            if (rig.fracture_strain <= 0) break;
            broken = true;
            break_t = t;
            break_force = curve(e) * rig.S0_mm2;
        }
    }
    return frames;
}

double max_stress(const StressOfStrain& curve, double to_strain, double* at_strain) {
    double best = -1, best_e = 0;
    for (double e = 0; e <= to_strain; e += 1e-5) {
        const double s = curve(e);
        if (s > best) {
            best = s;
            best_e = e;
        }
    }
    // Refine around the coarse maximum by golden-section search.
    double a = std::max(0.0, best_e - 2e-5), b = best_e + 2e-5;
    for (int k = 0; k < 100; ++k) {
        const double c = b - (b - a) * 0.618033988749895, d = a + (b - a) * 0.618033988749895;
        (curve(c) > curve(d) ? b : a) = (curve(c) > curve(d) ? d : c);
    }
    if (at_strain) *at_strain = 0.5 * (a + b);
    return curve(0.5 * (a + b));
}

}  // namespace tensile::testing
