// Test curves from published material laws, sampled like a real rig: a
// strain-controlled ramp (ISO 6892-1 Method A rates), a toe from grip seating,
// a preload at t = 0, Gaussian noise on force and extension, an optional
// crosshead with frame compliance, optional extensometer removal with a hold,
// and fracture as a force drop within milliseconds. Deterministic for a seed.
// Test-only: the simulator has its own, richer model.
#pragma once

#include <cstdint>
#include <functional>
#include <vector>

#include "engine/frame.hpp"

namespace tensile::testing {

// Engineering stress (MPa) of the specimen at engineering strain e (fraction).
using StressOfStrain = std::function<double(double e)>;

// Hill's form of Ramberg–Osgood (Hill-1944): ε = σ/E + 0.002·(σ/σ0.2)^n.
StressOfStrain hill_curve(double E, double sigma02, double n);
// Hollomon hardening with elasticity: σ_true = K·(ε_true,plastic)^n; returns
// engineering stress (uniform deformation, Considere-Hollomon).
StressOfStrain hollomon_curve(double E, double K, double n);
// Discontinuous yielding: elastic to ReH, a sharp drop to a transient below
// ReL, a serrated plateau at about ReL for Ae, then work hardening.
StressOfStrain yield_point_curve(double E, double ReH, double ReL, double Ae, double hardening_K,
                                 double hardening_n);

struct RigSettings {
    double S0_mm2 = 80;               // 20 × 4 mm strip
    double L0_mm = 80;
    double Lc_mm = 120;
    double rate_hz = 1000;
    double elastic_rate_per_s = 0.00025;   // ISO 6892-1 Method A range 2
    double plastic_rate_per_s = 0.0067;    // range 4
    double switch_strain = 0.01;           // rate change point
    double preload_MPa = 0;                // stress at t = 0 (curve starts part-way)
    double toe_mm = 0;                     // grip-seating slack seen by the extensometer
    double force_noise_share = 0;          // SD as a share of reading
    double force_noise_floor_N = 0;
    double extension_noise_mm = 0;
    double compliance_mm_per_N = 0;        // frame + grips; 0 = no crosshead channel
    double remove_extensometer_at = 0;     // strain; 0 = never
    double hold_s = 0;                     // hold at removal
    double fracture_strain = 0;            // 0 = stop at end_strain without fracture
    double end_strain = 0.05;
    std::uint64_t seed = 1;
};

std::vector<Frame> make_run(const StressOfStrain& curve, const RigSettings& rig);

// Helpers for exact references computed from the laws themselves (derived).
double max_stress(const StressOfStrain& curve, double to_strain, double* at_strain = nullptr);

}  // namespace tensile::testing
