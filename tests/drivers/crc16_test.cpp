// CRC-16/CCITT-FALSE against its published check value.
#include <catch2/catch.hpp>

#include <string_view>

#include "drivers/crc16.hpp"

using tensile::drivers::crc16_ccitt_false;

namespace {
std::uint16_t crc_of(std::string_view s) {
    return crc16_ccitt_false({reinterpret_cast<const std::uint8_t*>(s.data()), s.size()});
}
}  // namespace

TEST_CASE("CRC-16/CCITT-FALSE check value", "[crc]") {
    // CRC-16/CCITT-FALSE, REFERENCES.md: "123456789" gives 0x29B1.
    CHECK(crc_of("123456789") == 0x29B1);
    // The empty message leaves the init value untouched (init 0xFFFF, no final xor).
    CHECK(crc_of("") == 0xFFFF);
    static_assert(crc16_ccitt_false(std::span<const std::uint8_t>{}) == 0xFFFF);
}

TEST_CASE("CRC-16 can be computed in pieces", "[crc]") {
    const std::string_view s = "123456789";
    for (std::size_t cut = 0; cut <= s.size(); ++cut) {
        const auto a = crc_of(s.substr(0, cut));
        const auto b = crc16_ccitt_false({reinterpret_cast<const std::uint8_t*>(s.data()) + cut, s.size() - cut}, a);
        CHECK(b == 0x29B1);  // CRC-16/CCITT-FALSE, REFERENCES.md
    }
}
