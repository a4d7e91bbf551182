// Material model of a metal specimen pulled in tension: an elastic line, a
// hardening law in true stress / true strain (Hill's Ramberg–Osgood form,
// Hollomon or Voce), an optional yield point with a Lüders plateau, necking
// after the Considère point and fracture at a given elongation. Pure: no I/O,
// no clocks, no randomness that depends on anything but the spec. A spec that
// cannot make a sensible curve is refused by make_curve(), which names the
// field and what was expected.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "engine/result.hpp"

namespace tensile::sim {

enum class HardeningLaw { hill, hollomon, voce };
const char* name_of(HardeningLaw law);

// Discontinuous yielding: the elastic line runs up to ReH, the force falls to
// ReL over drop_strain, then stays on a serrated plateau (serrations above ReL,
// never below) until the yield-point extension Ae ends and hardening begins.
struct YieldPoint {
    double ReH_MPa = 0;
    double ReL_MPa = 0;
    double Ae_pct = 0;                 // from ReH to the start of hardening, % of gauge length
    double drop_strain = 0.0003;       // strain over which stress falls from ReH to ReL
    double serration_share = 0.004;    // serration height as a share of ReL
    double serration_strain = 0.0008;  // strain between two serrations
};

struct MaterialSpec {
    std::string name;
    std::string description;
    double E_MPa = 0;
    HardeningLaw law = HardeningLaw::hollomon;
    // Hill (1944): true strain = σ/E + 0.002·(σ/σ0.2)^n
    double hill_sigma02_MPa = 0;
    double hill_n = 0;
    // Hollomon: true stress = K·(true strain)^n, met by the elastic line at yield
    double hollomon_K_MPa = 0;
    double hollomon_n = 0;
    // Voce: true stress = σ0 + Q·(1 − exp(−b·true plastic strain))
    double voce_sigma0_MPa = 0;
    double voce_Q_MPa = 0;
    double voce_b = 0;
    std::optional<YieldPoint> yield_point;
    // Fracture: elongation after fracture A (elastic part removed), and how much
    // of the homogeneous stress the neck has taken away by then.
    double A_pct = 0;
    double neck_softening = 0.3;   // share in (0, 0.95)
    double neck_exponent = 2.0;    // > 1 keeps the curve smooth at the maximum
};

// The engineering stress–strain curve made from a spec, with the points that
// define it (all strains engineering, as fractions).
class MaterialCurve {
public:
    // Engineering stress at engineering strain ε (0 ≤ ε ≤ fracture_strain()).
    [[nodiscard]] double stress_MPa(double strain) const;
    // Stress of the hardening law alone (no yield point, no neck), engineering.
    [[nodiscard]] double homogeneous_stress_MPa(double strain) const;
    // True stress of the hardening law at total true strain (no shift, no neck).
    [[nodiscard]] double law_true_stress_MPa(double true_strain) const;

    [[nodiscard]] const MaterialSpec& spec() const { return spec_; }
    [[nodiscard]] double E_MPa() const { return spec_.E_MPa; }
    [[nodiscard]] double uniform_strain() const { return uniform_strain_; }     // at Fm
    [[nodiscard]] double fracture_strain() const { return fracture_strain_; }   // At / 100
    [[nodiscard]] double upper_yield_strain() const { return upper_yield_strain_; }  // 0 if none
    [[nodiscard]] double hardening_start_strain() const { return hardening_start_; }  // end of Lüders plateau

private:
    friend Result<MaterialCurve> make_curve(const MaterialSpec& spec);
    MaterialSpec spec_;
    double shift_true_ = 0;            // true-strain shift of the law after a Lüders plateau
    double upper_yield_strain_ = 0;
    double hardening_start_ = 0;
    double serration_period_ = 0;
    double uniform_strain_ = 0;
    double fracture_strain_ = 0;
};

Result<MaterialCurve> make_curve(const MaterialSpec& spec);

// Fast sampled copy of a curve for the signal path: linear interpolation on a
// fine uniform strain grid (truth values always come from MaterialCurve itself).
class CurveTable {
public:
    explicit CurveTable(const MaterialCurve& curve, std::size_t points = 1u << 18);
    [[nodiscard]] double stress_MPa(double strain) const;
    [[nodiscard]] double slope_MPa(double strain) const;  // dσ/dε of the segment holding strain
    [[nodiscard]] double max_strain() const { return max_strain_; }

private:
    std::vector<double> stress_;
    double step_ = 0;
    double max_strain_ = 0;
};

}  // namespace tensile::sim
