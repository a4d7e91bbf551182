// Finds the modulus E on the rising part of a stress–strain curve: either over
// a fixed stress window, or automatically as the steepest stress band that is
// straight (its two halves agree in slope), widened to neighbours of nearly the
// same slope, unless a band twice as steep at the low end of its confidence
// interval shows that the straight one is plastic flow. Works for curves with
// a toe (slack) and a preload, for linear hardening, and for soft alloys whose
// linear part ends far below Rm or that bend from the first MPa.
//
// Strain is regressed on stress and E taken as the reciprocal: at low stress
// the extensometer's noise is large against the strain range while the load
// cell's is small, and putting the noisier quantity on the y axis keeps the
// slope free of the attenuation bias that x-noise gives. r² is the same either
// way, so the ASTM E111 figures are unchanged.
#pragma once

#include <cstddef>
#include <optional>
#include <span>

#include "profile.hpp"

namespace tensile {

struct ModulusFit {
    double E_MPa = 0;
    double toe = 0;              // strain at zero stress: the toe (slack) to remove
    double r2 = 0;
    double cv_pct = 0;           // ASTM E111 slope coefficient of variation
    double residual_sd = 0;      // strain scatter about the line, as stress (MPa)
    double low_MPa = 0;          // stress window actually used
    double high_MPa = 0;
    std::size_t first = 0;       // frame range used
    std::size_t last = 0;
    [[nodiscard]] double E() const { return E_MPa; }
    [[nodiscard]] double toe_strain() const { return toe; }
};

// strain, stress: the curve so far; running_max: running maximum of stress
// (non-decreasing), used to map stress windows to frame ranges on a noisy curve.
std::optional<ModulusFit> find_modulus(std::span<const double> strain, std::span<const double> stress,
                                       std::span<const double> running_max, const Profile& profile);

}  // namespace tensile
