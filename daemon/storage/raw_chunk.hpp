// Raw bytes of one source as they arrived, kept so a run can be re-parsed
// later by the parsers of the day. A chunk holds the bytes of several reads
// back to back and, for each read, its length and arrival time (run clock).
// In the database a chunk is packed with zstd (level 1: fast enough for a
// flat-out stream on the recorder's thread, and device text shrinks about
// fourfold; when the recorder falls behind it packs quickly instead, one of
// zstd's fast levels, about 1.7x the speed for half the shrinking); a chunk
// that would not shrink, and every row from before packing, is kept plain.
// The codec is named on the row; both efforts unpack the same way.
// Error policy: packing cannot fail (it falls back to plain); unpacking or
// decoding damaged data returns an error value naming what was wrong.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "sqlite_db.hpp"

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

// A chunk's two BLOBs as stored, and the codec that packed them.
struct PackedRaw {
    std::string codec;              // raw_codec_zstd or raw_codec_plain
    std::string bytes;
    std::string arrivals;
    std::uint64_t plain_bytes = 0;  // the chunk's byte count before packing
};
inline constexpr std::string_view raw_codec_plain = "plain";
inline constexpr std::string_view raw_codec_zstd = "zstd";

std::string encode_arrivals(const std::vector<Arrival>& arrivals);
Result<std::vector<Arrival>> decode_arrivals(std::string_view blob, std::size_t byte_count);

enum class PackEffort { thorough, quick };
PackedRaw pack_raw(const RawChunk& chunk, PackEffort effort = PackEffort::thorough);
// Fills chunk.bytes and chunk.arrivals from a stored row.
Status unpack_raw(std::string_view codec, std::string_view bytes, std::string_view arrivals, RawChunk& chunk);

}  // namespace tensile::storage
