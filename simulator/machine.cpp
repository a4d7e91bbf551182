// Frame and test control; see machine.hpp. The strain follows the commanded
// strain rate directly; under crosshead control it is solved from the crosshead
// position with a few Newton steps on the sampled curve. If the frame would
// snap back (the falling force releases more frame stretch than the crosshead
// adds), the specimen breaks there: that is how stored energy ends a test.
#include "machine.hpp"

#include <algorithm>
#include <cmath>

namespace tensile::sim {

namespace {
bool finite_at_least(double v, double lo) { return std::isfinite(v) && v >= lo; }
std::string num(double v) { return std::to_string(v); }
}  // namespace

Result<MachineConfig> check(const MachineConfig& in, const SpecimenGeometry& g) {
    MachineConfig c = in;
    if (!(c.strain_rate_per_s > 0 && c.strain_rate_per_s <= 0.1))
        return Error{"strain rate must be in (0, 0.1] per second, got " + num(c.strain_rate_per_s)};
    if (!finite_at_least(c.switch_strain, 0)) return Error{"switch strain must be 0 or more, got " + num(c.switch_strain)};
    if (!finite_at_least(c.crosshead_speed_mm_s, 0)) return Error{"crosshead speed must be 0 (automatic) or positive, got " + num(c.crosshead_speed_mm_s)};
    if (!finite_at_least(c.compliance_mm_per_kN, 0)) return Error{"frame compliance must be 0 or positive mm/kN, got " + num(c.compliance_mm_per_kN)};
    if (!finite_at_least(c.slack_mm, 0)) return Error{"slack must be 0 or positive mm, got " + num(c.slack_mm)};
    if (!finite_at_least(c.toe_mm, 0)) return Error{"toe must be 0 or positive mm, got " + num(c.toe_mm)};
    if (!(c.relax_share >= 0 && c.relax_share <= 0.1)) return Error{"relaxation share must be in [0, 0.1], got " + num(c.relax_share)};
    if (!(c.relax_time_s > 0)) return Error{"relaxation time must be positive seconds, got " + num(c.relax_time_s)};
    if (!(c.fracture_time_s > 0 && c.fracture_time_s <= 0.05)) return Error{"fracture time must be in (0, 0.05] s, got " + num(c.fracture_time_s)};
    if (c.crosshead_speed_mm_s == 0) {
        if (!(g.Lc_mm > 0)) return Error{"the specimen's parallel length is needed to set the crosshead speed; give parallel_length_mm or a crosshead speed"};
        // ISO 6892-1 Method A range 4: 0.0067 1/s over the parallel length (from memory, REFERENCES ISO6892-MethodA).
        c.crosshead_speed_mm_s = 0.0067 * g.Lc_mm;
    }
    return c;
}

Machine::Machine(const CurveTable& curve, SpecimenGeometry geometry, MachineConfig config, double Fm_N,
                 std::vector<Mark> marks)
    : curve_(curve), g_(geometry), c_(config), Fm_N_(Fm_N), marks_(std::move(marks)) {
    if (!(g_.Lc_mm > 0)) g_.Lc_mm = g_.L0_mm;
}

double Machine::force_of(double strain) const { return curve_.stress_MPa(strain) * g_.S0_mm2; }

double Machine::crosshead_of(double strain, double force_N) const {
    const double seat = c_.slack_mm * (1 - std::exp(-force_N / (0.005 * Fm_N_)));
    return g_.Lc_mm * strain + c_.compliance_mm_per_kN * force_N / 1000 + seat;
}

void Machine::hold() {
    if (s_.held || s_.stopped) return;
    s_.held = true;
    hold_since_ = s_.time_s;
    const double plastic = s_.strain - curve_.stress_MPa(s_.strain) / curve_.slope_MPa(0);
    // Only a specimen that flows plastically relaxes noticeably while held.
    relax_goal_N_ = (plastic > 0.0005 && !fracture_time_) ? c_.relax_share * s_.force_N : 0;
}

void Machine::resume() {
    if (s_.stopped) return;
    s_.held = false;
}

void Machine::stop() {
    if (!s_.held) hold();
    s_.held = false;
    s_.stopped = true;
}

void Machine::fracture_at(double time_s) {
    fracture_time_ = time_s;
    fracture_strain_ = curve_.max_strain();
    fracture_force_N_ = force_of(fracture_strain_) - relax_N_;
    speed_after_fracture_ = crosshead_control_ ? c_.crosshead_speed_mm_s : c_.strain_rate_per_s * g_.Lc_mm;
    s_.fractured = true;
    s_.strain = fracture_strain_;
    for (auto& m : marks_)
        if (!m.time_s && m.strain <= fracture_strain_) m.time_s = time_s;
}

void Machine::set_strain(double strain, double t0, double t1) {
    const double old = s_.strain;
    const double fracture = curve_.max_strain();
    if (strain >= fracture) {
        const double tf = strain > old ? t0 + (t1 - t0) * (fracture - old) / (strain - old) : t1;
        for (auto& m : marks_)
            if (!m.time_s && m.strain > old && m.strain <= fracture) m.time_s = t0 + (t1 - t0) * (m.strain - old) / (strain - old);
        fracture_at(tf);
        return;
    }
    for (auto& m : marks_)
        if (!m.time_s && m.strain > old && m.strain <= strain) m.time_s = t0 + (t1 - t0) * (m.strain - old) / (strain - old);
    // Reloading after a hold: the relaxed force comes back along the elastic slope.
    if (relax_N_ > 0 && strain > old) relax_N_ = std::max(0.0, relax_N_ - curve_.slope_MPa(0) * g_.S0_mm2 * (strain - old));
    s_.strain = strain;
    s_.force_N = force_of(strain) - relax_N_;
    s_.extension_mm = g_.L0_mm * strain + c_.toe_mm * (1 - std::exp(-s_.force_N / (0.01 * Fm_N_)));
    s_.crosshead_mm = crosshead_of(strain, s_.force_N);
}

void Machine::advance_to(double t) {
    const double t0 = s_.time_s;
    const double dt = t - t0;
    if (!(dt > 0)) return;
    s_.time_s = t;

    if (fracture_time_) {
        const double tf = *fracture_time_;
        const double f = std::exp(-(t - tf) / c_.fracture_time_s);
        const double sigma_f = fracture_force_N_ / g_.S0_mm2;
        s_.force_N = fracture_force_N_ * f;
        // The broken halves spring back by their elastic strain.
        s_.extension_mm = g_.L0_mm * (fracture_strain_ - sigma_f / curve_.slope_MPa(0) * (1 - f)) + c_.toe_mm;
        if (!s_.held && !s_.stopped) s_.crosshead_mm += speed_after_fracture_ * dt;
        return;
    }
    if (s_.held || s_.stopped) {
        relax_N_ = relax_goal_N_ * (1 - std::exp(-(t - hold_since_) / c_.relax_time_s));
        s_.force_N = force_of(s_.strain) - relax_N_;
        return;
    }

    double strain = s_.strain;
    double ch_dt = dt;  // time spent under crosshead control in this step
    if (!crosshead_control_) {
        strain += c_.strain_rate_per_s * dt;
        if (strain < c_.switch_strain) {
            set_strain(strain, t0, t);
            return;
        }
        const double t_switch = t0 + (c_.switch_strain - s_.strain) / c_.strain_rate_per_s;
        set_strain(c_.switch_strain, t0, t_switch);
        if (fracture_time_) return;
        crosshead_control_ = true;
        crosshead_target_ = s_.crosshead_mm;
        ch_dt = t - t_switch;
        strain = s_.strain;
    }
    crosshead_target_ += c_.crosshead_speed_mm_s * ch_dt;
    const double Fs = 0.005 * Fm_N_;
    // After a hold the relaxed force comes back along the elastic slope as
    // the strain grows (set_strain): the solve must see that, or the frame
    // would overshoot its commanded position by compliance x regained force.
    const double elastic_N = curve_.slope_MPa(0) * g_.S0_mm2;
    const auto relax_at = [&](double e) { return std::max(0.0, relax_N_ - elastic_N * (e - s_.strain)); };
    for (int i = 0; i < 4; ++i) {
        const double relax = relax_at(strain);
        const double F = force_of(strain) - relax;
        const double f = crosshead_of(strain, F) - crosshead_target_;
        const double dF = g_.S0_mm2 * curve_.slope_MPa(strain) + (relax > 0 ? elastic_N : 0.0);
        const double df = g_.Lc_mm + (c_.compliance_mm_per_kN / 1000 + c_.slack_mm / Fs * std::exp(-F / Fs)) * dF;
        if (df < 0.05 * g_.Lc_mm) {  // snap-back: the frame's stored energy breaks the specimen now
            strain = curve_.max_strain();
            break;
        }
        strain = std::max(s_.strain, strain - f / df);
        if (std::abs(f) < 1e-9) break;
    }
    set_strain(strain, t - ch_dt, t);
}

}  // namespace tensile::sim
