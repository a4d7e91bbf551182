// Little byte-level helpers for the frame codec: LEB128 varints, zigzag for
// signed values, and raw little-endian 64-bit words. Reading never runs past
// the end: a short or malformed buffer sets `bad` and yields zeros, and the
// caller turns `bad` into an error value.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

namespace tensile::storage {

inline std::uint64_t zigzag(std::uint64_t v) {
    // Signed values travel as uint64 so that wrap-around differences stay defined.
    return (v << 1) ^ (0 - (v >> 63));
}
inline std::uint64_t unzigzag(std::uint64_t z) { return (z >> 1) ^ (0 - (z & 1)); }

inline std::size_t varint_size(std::uint64_t v) {
    std::size_t n = 1;
    while (v >= 0x80) { v >>= 7; ++n; }
    return n;
}

inline void put_varint(std::string& out, std::uint64_t v) {
    while (v >= 0x80) {
        out.push_back(static_cast<char>((v & 0x7f) | 0x80));
        v >>= 7;
    }
    out.push_back(static_cast<char>(v));
}

inline void put_u64(std::string& out, std::uint64_t v) {
    for (int i = 0; i < 8; ++i) out.push_back(static_cast<char>((v >> (8 * i)) & 0xff));
}

class ByteReader {
public:
    explicit ByteReader(std::string_view data) : data_(data) {}

    std::uint64_t varint() {
        std::uint64_t v = 0;
        for (int shift = 0; shift < 64; shift += 7) {
            if (pos_ >= data_.size()) { bad = true; return 0; }
            const auto b = static_cast<std::uint8_t>(data_[pos_++]);
            v |= static_cast<std::uint64_t>(b & 0x7f) << shift;
            if (!(b & 0x80)) return v;
        }
        bad = true;
        return 0;
    }
    std::uint64_t u64() {
        if (data_.size() - pos_ < 8 || pos_ > data_.size()) { bad = true; return 0; }
        std::uint64_t v = 0;
        for (int i = 0; i < 8; ++i) v |= static_cast<std::uint64_t>(static_cast<std::uint8_t>(data_[pos_++])) << (8 * i);
        return v;
    }
    std::uint8_t byte() {
        if (pos_ >= data_.size()) { bad = true; return 0; }
        return static_cast<std::uint8_t>(data_[pos_++]);
    }
    [[nodiscard]] bool at_end() const { return pos_ == data_.size(); }

    bool bad = false;

private:
    std::string_view data_;
    std::size_t pos_ = 0;
};

}  // namespace tensile::storage
