// Reads a plain decimal number ("-123.4567", "5.", ".5", or nothing at all)
// from text, for the table reader's common case. Digits go into an integer and
// one exact division by a power of ten gives the correctly rounded value while
// the digits fit in 2^53 (Clinger's fast path), so the result is the same
// double std::from_chars gives.
//
// Error policy: no errors of its own. Anything it does not take (more than 15
// digits, an exponent, a sign without digits, a lone point) gives nullptr and
// the caller sends the cell to its careful path, which names what was wrong.
// Reads only inside [p, end).
#pragma once

#include <cstddef>
#include <cstdint>

#include "engine/frame.hpp"

namespace tensile::plain_number {

// The number at p, stopping at the first char that cannot belong to it (the
// caller checks that this is a separator or a line end). An empty number
// reads as absent (an empty cell).
inline const char* read(const char* p, const char* end, char point, double& out) {
    static constexpr double powers[] = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
                                        1e12, 1e13, 1e14, 1e15};
    bool negative = false;
    if (p < end && *p == '-') {
        negative = true;
        ++p;
    }
    // Past 19 digits the mantissa wraps (defined for unsigned); more than 15
    // are refused below anyway.
    std::uint64_t mantissa = 0;
    // Whole part, then the fraction: two tight loops rather than one that
    // asks about the point at every digit.
    const char* const whole = p;
    for (unsigned d; p < end && (d = static_cast<unsigned>(*p - '0')) < 10; ++p) mantissa = mantissa * 10 + d;
    std::ptrdiff_t digits = p - whole, fraction = -1;
    if (p < end && *p == point) {
        const char* const first = ++p;
        for (unsigned d; p < end && (d = static_cast<unsigned>(*p - '0')) < 10; ++p) mantissa = mantissa * 10 + d;
        fraction = p - first;
        digits += fraction;
    }
    if (digits > 15) return nullptr;
    if (digits == 0) {
        if (negative || fraction >= 0) return nullptr;
        out = absent;
        return p;
    }
    const double v = static_cast<double>(mantissa) / powers[fraction < 0 ? 0 : fraction];
    out = negative ? -v : v;
    return p;
}

}  // namespace tensile::plain_number
