// Channel samples and the counters a parser keeps about its stream.
// A sample is one reading of one channel in base units (N for force, mm for
// lengths). Absence of a value is NaN plus a flag that says why; nothing on the
// data path throws, so every fault ends up as a flag or a counter here.
#pragma once

#include <cstdint>
#include <limits>
#include <vector>

namespace tensile::drivers {

enum class Quantity : std::uint8_t { force, length };

// Base unit of a quantity: what Sample::value is expressed in.
constexpr const char* base_unit_name(Quantity q) { return q == Quantity::force ? "N" : "mm"; }

namespace flag {
inline constexpr std::uint8_t overload = 1u << 0;  // device said OVER/----/INT32_MIN, or outside the channel's range
inline constexpr std::uint8_t stale = 1u << 1;     // aligner: no fresh enough reading for this instant
inline constexpr std::uint8_t resynced = 1u << 2;  // first good reading after discarded bytes or a bad record
inline constexpr std::uint8_t nan = 1u << 3;       // device sent nan (only emitted when keep_nan is set)
}  // namespace flag

// How the device stamped the record this sample came from.
enum class Stamp : std::uint8_t {
    none,       // no device time: the time base uses arrival time minus latency
    device_us,  // device clock in microseconds (raw, may wrap; see TimeBase)
    counter,    // sample counter; the time base divides by the nominal rate
};

struct Sample {
    std::uint16_t channel = 0;  // index into the parser's channel list
    std::uint8_t flags = 0;
    Quantity quantity = Quantity::force;
    Stamp stamp_kind = Stamp::none;
    std::uint64_t stamp = 0;  // raw device time (µs) or counter, per stamp_kind
    double value = std::numeric_limits<double>::quiet_NaN();   // N or mm
    double time_s = std::numeric_limits<double>::quiet_NaN();  // set by the time base (host monotonic s)
};

// Faults that belong to one channel.
struct ChannelCounters {
    std::uint64_t good = 0;          // samples emitted with a finite value
    std::uint64_t nan = 0;           // `nan` readings (skipped unless keep_nan)
    std::uint64_t overload = 0;      // OVER / ---- / INT32_MIN
    std::uint64_t out_of_range = 0;  // finite but outside [min, max] of the channel, or infinite
    bool operator==(const ChannelCounters&) const = default;
};

// Faults of the byte stream that cannot be pinned on one channel.
struct StreamCounters {
    std::uint64_t bytes = 0;               // bytes fed
    std::uint64_t records = 0;             // accepted records (lines or frames)
    std::uint64_t bad_records = 0;         // torn or malformed lines, frames with a bad length/count
    std::uint64_t long_lines = 0;          // lines longer than max_line (discarded)
    std::uint64_t checksum_failures = 0;   // binary frames whose CRC did not match
    std::uint64_t resync_bytes = 0;        // bytes discarded: bad lines, long lines, bytes skipped hunting for sync
    std::uint64_t lost_frames = 0;         // frames missing by sequence number
    std::uint64_t unknown_keys = 0;        // key=value pairs whose key no channel uses
    std::uint64_t device_messages = 0;     // `#` lines handed to the message callback
    bool operator==(const StreamCounters&) const = default;
};

struct ParserCounters {
    StreamCounters stream;
    std::vector<ChannelCounters> channels;
    bool operator==(const ParserCounters&) const = default;
};

}  // namespace tensile::drivers
