// Arrival list coding: varint count, then per read a varint length and the
// time's IEEE-754 bits (exact, so a replay keeps the original timing).
// Packing: each BLOB one zstd frame (with its content size, so unpacking
// knows the size before it allocates).
#include "raw_chunk.hpp"

#include <bit>
#include <memory>
#include <zstd.h>

#include "varint.hpp"

namespace tensile::storage {
namespace {

// Fast, and on device text about 4x smaller; higher levels cost far more time
// for a few per cent. The quick level (zstd's --fast=10) packs flat-out device
// text about 1.7x as fast, about 2x smaller (measured with `zstd -b` on 50 MB
// of simulator lines).
constexpr int zstd_level = 1;
constexpr int zstd_quick_level = -10;
// A chunk is a few hundred KiB; a stated size past this is damage, not data.
constexpr unsigned long long max_unpacked = 256ull << 20;

// Empty when zstd fails (it cannot with a full-size buffer, short of memory).
std::string zstd_pack(std::string_view in, int level) {
    thread_local std::unique_ptr<ZSTD_CCtx, decltype(&ZSTD_freeCCtx)> ctx(ZSTD_createCCtx(), &ZSTD_freeCCtx);
    // Packed into scratch, then copied at its size: the result waits in the
    // backlog, and a string cut down by resize keeps the worst-case capacity.
    thread_local std::string scratch;
    if (!ctx) return {};
    scratch.resize(ZSTD_compressBound(in.size()));
    const std::size_t n = ZSTD_compressCCtx(ctx.get(), scratch.data(), scratch.size(), in.data(), in.size(), level);
    if (ZSTD_isError(n)) return {};
    return scratch.substr(0, n);
}

Result<std::string> zstd_unpack(std::string_view in, const char* what) {
    const unsigned long long size = ZSTD_getFrameContentSize(in.data(), in.size());
    if (size == ZSTD_CONTENTSIZE_ERROR || size == ZSTD_CONTENTSIZE_UNKNOWN || size > max_unpacked)
        return Error{std::string("raw chunk: the packed ") + what + " are damaged (no valid zstd frame header)"};
    std::string out(size, '\0');
    const std::size_t n = ZSTD_decompress(out.data(), out.size(), in.data(), in.size());
    if (ZSTD_isError(n) || n != size)
        return Error{std::string("raw chunk: the packed ") + what + " are damaged (zstd: " +
                     (ZSTD_isError(n) ? ZSTD_getErrorName(n) : "size differs from its header") + ")"};
    return out;
}

}  // namespace

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

PackedRaw pack_raw(const RawChunk& chunk, PackEffort effort) {
    const int level = effort == PackEffort::quick ? zstd_quick_level : zstd_level;
    std::string arrivals = encode_arrivals(chunk.arrivals);
    std::string packed_bytes = zstd_pack(chunk.bytes, level);
    std::string packed_arrivals = zstd_pack(arrivals, level);
    // Tiny or random-looking chunks do not shrink; then plain is the smaller.
    const bool packed = !packed_bytes.empty() && !packed_arrivals.empty();
    if (packed && packed_bytes.size() + packed_arrivals.size() < chunk.bytes.size() + arrivals.size())
        return {std::string(raw_codec_zstd), std::move(packed_bytes), std::move(packed_arrivals), chunk.bytes.size()};
    return {std::string(raw_codec_plain), chunk.bytes, std::move(arrivals), chunk.bytes.size()};
}

Status unpack_raw(std::string_view codec, std::string_view bytes, std::string_view arrivals, RawChunk& chunk) {
    std::string arrival_blob;
    if (codec == raw_codec_plain) {
        chunk.bytes.assign(bytes);
        arrival_blob.assign(arrivals);
    } else if (codec == raw_codec_zstd) {
        auto b = zstd_unpack(bytes, "bytes");
        if (!b) return Error{b.error()};
        auto a = zstd_unpack(arrivals, "arrival times");
        if (!a) return Error{a.error()};
        chunk.bytes = std::move(*b);
        arrival_blob = std::move(*a);
    } else {
        return Error{"raw chunk: unknown codec '" + std::string(codec) + "' (expected plain or zstd)"};
    }
    auto decoded = decode_arrivals(arrival_blob, chunk.bytes.size());
    if (!decoded) return Error{decoded.error()};
    chunk.arrivals = std::move(*decoded);
    return Done{};
}

}  // namespace tensile::storage
