// One aligned instant of a run: time, force, extension and crosshead position,
// in SI-style base units (s, N, mm). A channel that has no value at this
// instant (not fitted, removed, stale) holds NaN; nothing else marks absence.
#pragma once

#include <cmath>
#include <limits>

namespace tensile {

inline constexpr double absent = std::numeric_limits<double>::quiet_NaN();

struct Frame {
    double time_s = absent;
    double force_N = absent;
    double extension_mm = absent;  // extensometer, zeroed at arming
    double crosshead_mm = absent;  // crosshead travel, zeroed at arming

    [[nodiscard]] bool has_extension() const { return std::isfinite(extension_mm); }
    [[nodiscard]] bool has_crosshead() const { return std::isfinite(crosshead_mm); }
};

}  // namespace tensile
