// Unit names and factors; see units.hpp. Factors are exact where NIST SP 811
// defines them exactly (lbf, in, kgf); ksi and psi use SP 811's printed values.
#include "units.hpp"

namespace tensile {

namespace {
constexpr double newtons_per_lbf = 4.4482216152605;   // NIST SP 811, exact
constexpr double newtons_per_kgf = 9.80665;           // NIST SP 811, exact
constexpr double millimetres_per_inch = 25.4;         // NIST SP 811, exact
constexpr double megapascal_per_ksi = 6.894757;       // NIST SP 811
}  // namespace

std::optional<ForceUnit> parse_force_unit(std::string_view n) {
    if (n == "N") return ForceUnit::newton;
    if (n == "kN") return ForceUnit::kilonewton;
    if (n == "lbf") return ForceUnit::pound_force;
    if (n == "kgf") return ForceUnit::kilogram_force;
    return std::nullopt;
}

std::optional<LengthUnit> parse_length_unit(std::string_view n) {
    if (n == "mm") return LengthUnit::millimetre;
    if (n == "um" || n == "µm") return LengthUnit::micrometre;
    if (n == "in") return LengthUnit::inch;
    return std::nullopt;
}

std::optional<StressUnit> parse_stress_unit(std::string_view n) {
    if (n == "MPa") return StressUnit::megapascal;
    if (n == "ksi") return StressUnit::ksi;
    if (n == "psi") return StressUnit::psi;
    return std::nullopt;
}

std::string_view name_of(ForceUnit u) {
    switch (u) {
        case ForceUnit::newton: return "N";
        case ForceUnit::kilonewton: return "kN";
        case ForceUnit::pound_force: return "lbf";
        case ForceUnit::kilogram_force: return "kgf";
    }
    return "?";
}

std::string_view name_of(LengthUnit u) {
    switch (u) {
        case LengthUnit::millimetre: return "mm";
        case LengthUnit::micrometre: return "um";
        case LengthUnit::inch: return "in";
    }
    return "?";
}

std::string_view name_of(StressUnit u) {
    switch (u) {
        case StressUnit::megapascal: return "MPa";
        case StressUnit::ksi: return "ksi";
        case StressUnit::psi: return "psi";
    }
    return "?";
}

double newtons_per(ForceUnit u) {
    switch (u) {
        case ForceUnit::newton: return 1.0;
        case ForceUnit::kilonewton: return 1000.0;
        case ForceUnit::pound_force: return newtons_per_lbf;
        case ForceUnit::kilogram_force: return newtons_per_kgf;
    }
    return 1.0;
}

double millimetres_per(LengthUnit u) {
    switch (u) {
        case LengthUnit::millimetre: return 1.0;
        case LengthUnit::micrometre: return 1e-3;
        case LengthUnit::inch: return millimetres_per_inch;
    }
    return 1.0;
}

double per_megapascal(StressUnit u) {
    switch (u) {
        case StressUnit::megapascal: return 1.0;
        case StressUnit::ksi: return 1.0 / megapascal_per_ksi;
        case StressUnit::psi: return 1000.0 / megapascal_per_ksi;
    }
    return 1.0;
}

}  // namespace tensile
