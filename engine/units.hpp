// Units of the quantities tensiled reads and reports, with conversion factors
// from NIST SP 811 (1 lbf = 4.4482216152605 N, 1 in = 25.4 mm, 1 kgf =
// 9.80665 N, 1 ksi = 6.894757 MPa). Parsing never throws: an unknown unit name
// gives an empty optional and the caller words the message.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace tensile {

enum class ForceUnit { newton, kilonewton, pound_force, kilogram_force };
enum class LengthUnit { millimetre, micrometre, inch };
enum class StressUnit { megapascal, ksi, psi };

std::optional<ForceUnit> parse_force_unit(std::string_view name);
std::optional<LengthUnit> parse_length_unit(std::string_view name);
std::optional<StressUnit> parse_stress_unit(std::string_view name);

std::string_view name_of(ForceUnit unit);
std::string_view name_of(LengthUnit unit);
std::string_view name_of(StressUnit unit);

// Multiply a value in `unit` by this to get newtons / millimetres.
double newtons_per(ForceUnit unit);
double millimetres_per(LengthUnit unit);
// Multiply a stress in MPa by this to get the stress in `unit`.
double per_megapascal(StressUnit unit);

inline double to_newtons(double value, ForceUnit unit) { return value * newtons_per(unit); }
inline double to_millimetres(double value, LengthUnit unit) { return value * millimetres_per(unit); }
inline double from_megapascal(double mpa, StressUnit unit) { return mpa * per_megapascal(unit); }

}  // namespace tensile
