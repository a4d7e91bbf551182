// CRC-16/CCITT-FALSE (poly 0x1021, init 0xFFFF, no reflection, no final xor),
// the checksum of the binary wire format. Table-driven; the table is built at
// compile time so there is no start-up state.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <span>

namespace tensile::drivers {

namespace detail {
constexpr std::array<std::uint16_t, 256> make_crc16_table() {
    std::array<std::uint16_t, 256> t{};
    for (unsigned i = 0; i < 256; ++i) {
        std::uint16_t c = static_cast<std::uint16_t>(i << 8);
        for (int b = 0; b < 8; ++b)
            c = static_cast<std::uint16_t>((c & 0x8000u) ? (c << 1) ^ 0x1021u : (c << 1));
        t[i] = c;
    }
    return t;
}
inline constexpr auto crc16_table = make_crc16_table();
}  // namespace detail

constexpr std::uint16_t crc16_ccitt_false(std::span<const std::uint8_t> data, std::uint16_t crc = 0xFFFF) {
    for (std::uint8_t byte : data)
        crc = static_cast<std::uint16_t>((crc << 8) ^ detail::crc16_table[((crc >> 8) ^ byte) & 0xFFu]);
    return crc;
}

}  // namespace tensile::drivers
