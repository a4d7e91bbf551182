// Raw bytes of one source as they arrived, kept so a run can be re-parsed
// later by the parsers of the day. A chunk holds the bytes of several reads
// back to back and, for each read, its length and arrival time (run clock).
// Error policy: decoding damaged arrival data returns an error value.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "engine/result.hpp"

namespace tensile::storage {

struct Arrival {
    std::uint64_t length = 0;  // bytes of this read
    double time_s = 0;         // when they arrived, on the run clock
};

struct RawChunk {
    std::string source;
    std::int64_t seq = 0;
    std::string bytes;
    std::vector<Arrival> arrivals;  // lengths add up to bytes.size()
};

std::string encode_arrivals(const std::vector<Arrival>& arrivals);
Result<std::vector<Arrival>> decode_arrivals(std::string_view blob, std::size_t byte_count);

}  // namespace tensile::storage
