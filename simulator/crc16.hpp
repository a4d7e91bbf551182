// CRC-16/CCITT-FALSE for the simulator's binary frames: the drivers' own
// implementation (drivers/crc16.hpp), so encoder and parser agree by
// construction; both are checked against the published check value 0x29B1.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>

#include "drivers/crc16.hpp"

namespace tensile::sim {

constexpr std::uint16_t crc16_ccitt_false(const unsigned char* data, std::size_t size, std::uint16_t crc = 0xFFFF) {
    return drivers::crc16_ccitt_false(std::span<const std::uint8_t>(data, size), crc);
}

}  // namespace tensile::sim
