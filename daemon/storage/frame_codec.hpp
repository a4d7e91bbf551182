// Lossless compression of a chunk of frames into one BLOB, bit-exact for every
// double (NaN payloads, -0.0, infinities included).
//
// Each column (time, force, extension, crosshead) is coded on its own. Values
// from instruments sit on a grid: decimal text parsed by strtod (v = q / 10^k)
// or counts times a step (v = q * 1e-k). When a value re-forms to the very same
// bits from its integer q, only q is kept, as a zigzag varint of its first or
// second difference; otherwise the IEEE-754 bit pattern itself is differenced.
// Values that fit neither (NaN, -0.0, stray computed values) are exceptions,
// kept run-length coded as raw bits. The cheapest plan per column wins.
//
// Error policy: encoding cannot fail; decoding a damaged BLOB returns an error
// value and never reads past the buffer.
#pragma once

#include <cstddef>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "engine/frame.hpp"
#include "engine/result.hpp"

namespace tensile::storage {

inline constexpr unsigned frame_codec_version = 1;
inline constexpr std::size_t max_frames_per_chunk = 1u << 20;

std::string encode_frames(std::span<const Frame> frames);

// Appends the decoded frames to `out`; returns how many were appended.
Result<std::size_t> decode_frames(std::string_view blob, std::vector<Frame>& out);

}  // namespace tensile::storage
