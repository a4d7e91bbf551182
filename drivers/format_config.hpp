// What a parser needs to know about a stream: its wire format settings and its
// channels (which field or key, unit, calibration, plausible range). Plain data,
// filled by the TOML loader (source_config.hpp) or directly by tests.
//
// Calibration rule, the same for every format:
//     value [N or mm] = raw · (base units per unit) · scale + offset
// where raw is the number on the wire (text: after any unit suffix picks the
// unit; binary: the int32 count), unit is the channel's configured unit, scale
// is per count for binary and 1 by default for text, and offset is in N or mm.
#pragma once

#include <cstddef>
#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "engine/units.hpp"
#include "sample.hpp"

namespace tensile::drivers {

using ChannelUnit = std::variant<ForceUnit, LengthUnit>;

inline Quantity quantity_of(const ChannelUnit& u) {
    return std::holds_alternative<ForceUnit>(u) ? Quantity::force : Quantity::length;
}
inline double base_per_unit(const ChannelUnit& u) {
    return std::holds_alternative<ForceUnit>(u) ? newtons_per(std::get<ForceUnit>(u))
                                                : millimetres_per(std::get<LengthUnit>(u));
}

struct ChannelSpec {
    std::string name;                     // force, extension, crosshead, or the rig's own name
    ChannelUnit unit = ForceUnit::newton; // unit of a bare number (and of binary counts × scale)
    int field = -1;                       // lines: field position (0-based) of this channel
    std::string key;                      // keyvalue: the key of this channel
    double scale = 1.0;                   // calibration gain (binary: units per count)
    double offset = 0.0;                  // calibration offset, in N or mm
    double min = -std::numeric_limits<double>::infinity();  // plausible range, N or mm
    double max = std::numeric_limits<double>::infinity();
};

struct FormatConfig {
    std::string format = "lines";  // registry name: lines, keyvalue, binary
    std::vector<ChannelSpec> channels;

    // lines
    char separator = ',';
    std::optional<int> time_field;     // field holding device time (in time units, µs by default)
    std::optional<int> counter_field;  // field holding a sample counter
    int field_count = 0;               // fields per record; 0 = highest configured position + 1
    bool decimal_comma = false;        // values written "1523,4" (needs a separator other than ',')
    // keyvalue
    std::string time_key = "t";
    std::string counter_key;           // empty = none
    // lines and keyvalue
    std::size_t max_line = 512;        // longer lines are discarded and counted
    // Microseconds per unit of the device time on the wire: 1 for µs (an
    // integer), 1000 for ms and 1e6 for s (decimals allowed). Stamps are kept
    // in whole µs either way.
    double time_us_per_unit = 1.0;
    // all
    double nominal_rate_hz = 0.0;      // needed when a counter stamps the samples
    bool keep_nan = false;             // emit `nan` readings as flagged samples instead of skipping them
};

}  // namespace tensile::drivers
