// One sampled instant as the rig puts it on the wire: device time and one
// reading per channel, each an integer count at the channel's wire scale or a
// flag (overload / out of range, no value, NaN). Plain data.
#pragma once

#include <cstdint>

namespace tensile::sim {

// Wire scales of drivers/wire-formats.md (binary counts); the text formats
// print the same counts with the matching number of decimals.
inline constexpr double force_scale_N = 0.001;
inline constexpr double extension_scale_mm = 0.0001;
inline constexpr double crosshead_scale_mm = 0.0001;
inline constexpr int force_decimals = 3;
inline constexpr int extension_decimals = 4;
inline constexpr int crosshead_decimals = 4;

enum class Reading : std::uint8_t { value, over, absent, nan };

struct ChannelReading {
    Reading kind = Reading::value;
    std::int64_t counts = 0;
};

struct Sample {
    std::uint64_t index = 0;           // sample counter from 0
    std::uint64_t device_time_us = 0;  // device clock (jitter, clock jumps included)
    ChannelReading force, extension, crosshead;
};

enum class ChannelId { force, extension, crosshead };

}  // namespace tensile::sim
