// Reading one value field of a text record: a number with an optional unit
// suffix (`1523.42 N`, `0.0123mm`), or the words OVER / ---- (overload) and
// nan. Also small helpers shared by the text formats. Pure, never throws.
#pragma once

#include <cstdint>
#include <optional>
#include <string_view>

#include "parser.hpp"

namespace tensile::drivers {

// `field` is trimmed of spaces and tabs first. A unit suffix must be one of the
// channel's quantity (N, kN, lbf, kgf / mm, um, in); anything else is bad.
// With `decimal_comma`, one ',' in the number is its decimal mark ("1523,4 N",
// as many European indicators send it); the caller makes sure ',' is not also
// the field separator.
Reading read_value(std::string_view field, const ChannelUnit& unit, bool decimal_comma = false);

// Unsigned decimal integer (device time in µs or a counter), trimmed.
std::optional<std::uint64_t> read_unsigned(std::string_view field);

// Device time in whole µs from a field in units of `us_per_unit` µs: an
// integer when that is 1, else a non-negative decimal number ("12.345678"
// seconds) rounded to the nearest µs. Trimmed; nullopt when it is no such
// number or too large for 64 bits.
std::optional<std::uint64_t> read_stamp_us(std::string_view field, double us_per_unit);

std::string_view trim(std::string_view s);

}  // namespace tensile::drivers
