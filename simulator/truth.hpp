// Ground truth: the exact results of the curve a run plays, worked out from the
// material model itself (closed forms where they exist, otherwise fine
// numerical solution of the model), never by running the analysis engine.
// Pure; values the model does not have stay empty and are left out of the JSON.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "engine/specimen.hpp"
#include "material.hpp"

namespace tensile::sim {

struct MaterialTruth {
    double S0_mm2 = 0;
    double L0_mm = 0;
    double E_MPa = 0;
    std::optional<double> Rp02_MPa;
    double Rp02_strain = 0;          // engineering strain where Rp0.2 is reached
    std::optional<double> ReH_MPa, ReL_MPa, Ae_pct;
    double Fm_N = 0, Rm_MPa = 0;
    double Ag_pct = 0, Agt_pct = 0;  // plastic and total extension at Fm
    double At_pct = 0, A_pct = 0;    // total extension at fracture, and with the elastic part removed
    double fracture_stress_MPa = 0;  // engineering stress at the onset of fracture
    std::optional<double> n_value;
};

// Offset proof strength Rp x (offset as a fraction, 0.002 for Rp0.2) of any
// curve given as engineering stress of engineering strain, found by bisection
// on the plastic strain ε − σ/E between 0 and max_strain.
template <class StressOf>
double proof_strain(const StressOf& stress_of, double E_MPa, double offset, double max_strain) {
    double lo = 0, hi = max_strain;
    for (int i = 0; i < 200 && hi - lo > 1e-15; ++i) {
        const double mid = 0.5 * (lo + hi);
        if (mid - stress_of(mid) / E_MPa < offset) lo = mid; else hi = mid;
    }
    return 0.5 * (lo + hi);
}

// n-value: least squares of ln(true stress) on ln(true strain) over the
// engineering strain range [from, to] (fractions), on n_points of the curve.
double n_value_of(const MaterialCurve& curve, double from, double to, int n_points = 2001);

MaterialTruth compute_truth(const MaterialCurve& curve, const SpecimenGeometry& geometry);

}  // namespace tensile::sim
