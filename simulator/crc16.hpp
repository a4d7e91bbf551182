// CRC-16/CCITT-FALSE as drivers/wire-formats.md fixes it for binary frames:
// poly 0x1021, init 0xFFFF, no reflection, no final xor. Table-driven; the
// table is built at compile time. Cannot fail.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>

namespace tensile::sim {

namespace detail {
constexpr std::array<std::uint16_t, 256> make_crc16_table() {
    std::array<std::uint16_t, 256> t{};
    for (unsigned i = 0; i < 256; ++i) {
        std::uint16_t c = static_cast<std::uint16_t>(i << 8);
        for (int b = 0; b < 8; ++b) c = static_cast<std::uint16_t>((c & 0x8000) ? (c << 1) ^ 0x1021 : c << 1);
        t[i] = c;
    }
    return t;
}
inline constexpr auto crc16_table = make_crc16_table();
}  // namespace detail

constexpr std::uint16_t crc16_ccitt_false(const unsigned char* data, std::size_t size, std::uint16_t crc = 0xFFFF) {
    for (std::size_t i = 0; i < size; ++i)
        crc = static_cast<std::uint16_t>((crc << 8) ^ detail::crc16_table[((crc >> 8) ^ data[i]) & 0xFF]);
    return crc;
}

}  // namespace tensile::sim
