// Arrival list coding: varint count, then per read a varint length and the
// time's IEEE-754 bits (exact, so a replay keeps the original timing).
#include "raw_chunk.hpp"

#include <bit>

#include "varint.hpp"

namespace tensile::storage {

std::string encode_arrivals(const std::vector<Arrival>& arrivals) {
    std::string out;
    put_varint(out, arrivals.size());
    for (const auto& a : arrivals) {
        put_varint(out, a.length);
        put_u64(out, std::bit_cast<std::uint64_t>(a.time_s));
    }
    return out;
}

Result<std::vector<Arrival>> decode_arrivals(std::string_view blob, std::size_t byte_count) {
    ByteReader in(blob);
    const std::uint64_t n = in.varint();
    if (in.bad || n > blob.size()) return Error{"raw chunk: bad arrival count"};
    std::vector<Arrival> out(n);
    std::uint64_t total = 0;
    for (auto& a : out) {
        a.length = in.varint();
        a.time_s = std::bit_cast<double>(in.u64());
        total += a.length;
    }
    if (in.bad || !in.at_end() || total != byte_count) return Error{"raw chunk: arrivals do not match the bytes"};
    return out;
}

}  // namespace tensile::storage
