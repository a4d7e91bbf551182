// Ground truth from the model; see truth.hpp. Nothing here can fail once the
// curve exists (make_curve has checked the spec).
#include "truth.hpp"

#include <cmath>

namespace tensile::sim {

double n_value_of(const MaterialCurve& curve, double from, double to, int n_points) {
    double sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (int i = 0; i < n_points; ++i) {
        const double e = from + (to - from) * i / (n_points - 1);
        const double x = std::log(std::log1p(e));
        const double y = std::log(curve.stress_MPa(e) * (1 + e));
        sx += x; sy += y; sxx += x * x; sxy += x * y;
    }
    const double n = n_points;
    return (n * sxy - sx * sy) / (n * sxx - sx * sx);
}

MaterialTruth compute_truth(const MaterialCurve& c, const SpecimenGeometry& g) {
    MaterialTruth t;
    t.S0_mm2 = g.S0_mm2;
    t.L0_mm = g.L0_mm;
    // The curve's initial slope: Hooke's law in true terms has engineering slope E at zero strain.
    t.E_MPa = c.E_MPa();

    auto stress = [&](double e) { return c.stress_MPa(e); };
    t.Rp02_strain = proof_strain(stress, c.E_MPa(), 0.002, c.uniform_strain());
    t.Rp02_MPa = c.stress_MPa(t.Rp02_strain);

    if (const auto& y = c.spec().yield_point) {
        // By construction: the elastic line ends at ReH, the serrations only rise
        // above ReL, and the plateau ends exactly Ae after ReH.
        t.ReH_MPa = y->ReH_MPa;
        t.ReL_MPa = y->ReL_MPa;
        t.Ae_pct = y->Ae_pct;
    }

    const double eu = c.uniform_strain();
    t.Rm_MPa = c.stress_MPa(eu);
    t.Fm_N = t.Rm_MPa * g.S0_mm2;
    t.Agt_pct = 100 * eu;
    // ISO 6892-1: Ag = Agt − Rm/E (plastic part at maximum force).
    t.Ag_pct = t.Agt_pct - 100 * t.Rm_MPa / c.E_MPa();

    const double ef = c.fracture_strain();
    t.fracture_stress_MPa = c.stress_MPa(ef);
    t.At_pct = 100 * ef;
    t.A_pct = t.At_pct - 100 * t.fracture_stress_MPa / c.E_MPa();

    // ISO 10275 range: 10 % to 20 %, or 10 % to Ag when Ag is below 20 %.
    const double to = std::min(20.0, t.Ag_pct);
    const double from = 10.0;
    if (to > from + 1.0 && (!c.spec().yield_point || c.hardening_start_strain() * 100 < from))
        t.n_value = n_value_of(c, from / 100, to / 100);
    return t;
}

}  // namespace tensile::sim
