// Strain carried on from the crosshead once the extensometer is gone. Fitted on
// the frames where both were read: crosshead = b + a·extension + C·force, where
// a maps the extensometer's gauge length to the deforming length and C is the
// elastic compliance of the frame, grips and shoulders. After the hand-over the
// extension is estimated from crosshead and force, shifted so the strain is
// continuous at the switch. Pure; refuses (empty optional) when data can't
// support a fit, and the caller falls back.
#pragma once

#include <cstddef>
#include <optional>
#include <span>

namespace tensile {

struct CrossheadModel {
    double a = 1;         // crosshead mm per extensometer mm
    double C = 0;         // crosshead mm per newton (compliance)
    double b = 0;         // intercept, mm
    double shift_mm = 0;  // added to estimates for continuity at the switch
    bool from_fit = true; // false when a was taken from Lc / L0

    [[nodiscard]] double extension_mm(double crosshead_mm, double force_N) const {
        return (crosshead_mm - b - C * force_N) / a + shift_mm;
    }
};

// Fits over rows [first, last) where extension and crosshead are both finite.
// `fallback_a` (Lc / L0, or 1) is used when extension and force move together
// so closely (elastic-only data) that a and C can't be told apart.
std::optional<CrossheadModel> fit_crosshead_model(std::span<const double> extension_mm,
                                                  std::span<const double> crosshead_mm,
                                                  std::span<const double> force_N, std::size_t first,
                                                  std::size_t last, double fallback_a);

}  // namespace tensile
