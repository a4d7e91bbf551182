// Cells of a recorded table, shared by the row reader (table_reader.cpp) and
// the header search (table_start.cpp) so both agree on what a number is:
// trimming of blanks and quotes, and reading one cell as a number (the
// plain_number fast path, then std::from_chars for exponents and long
// mantissas). Error policy: no errors of their own; false means "not a number"
// and the caller names the cell.
#pragma once

#include <charconv>
#include <cmath>
#include <string_view>

#include "plain_number.hpp"

namespace tensile::table_cells {

// Blanks, tabs, quotes and a stray carriage return off both ends.
inline std::string_view trim(std::string_view s) {
    const auto junk = [](char c) { return c == ' ' || c == '\t' || c == '"' || c == '\r'; };
    while (!s.empty() && junk(s.front())) s.remove_prefix(1);
    while (!s.empty() && junk(s.back())) s.remove_suffix(1);
    return s;
}

// The common case without copying: a plain decimal number (plain_number.hpp)
// ending at the separator or `end`. False sends the cell to the careful path.
inline bool parse_fast(const char* p, const char* end, char sep, bool decimal_comma, double& out, const char*& stop) {
    const char* q = plain_number::read(p, end, decimal_comma ? ',' : '.', out);
    if (!q || (q < end && *q != sep)) return false;
    stop = q;
    return true;
}

// Any cell: the fast path, then std::from_chars for what it leaves, which
// also refuses nan and inf. A '+' is allowed before digits (strtod's
// grammar), never before another sign ("+-1" is not a number).
inline bool parse_number(std::string_view cell, bool decimal_comma, double& out) {
    const char* stop = nullptr;
    if (parse_fast(cell.data(), cell.data() + cell.size(), '\0', decimal_comma, out, stop)) return true;
    char buf[64];
    if (cell.size() >= sizeof buf) return false;
    std::size_t n = 0;
    for (char c : cell) buf[n++] = decimal_comma && c == ',' ? '.' : c;
    const char* first = buf;
    if (n > 1 && buf[0] == '+') {
        if (buf[1] == '-') return false;
        ++first;
    }
    auto [ptr, ec] = std::from_chars(first, buf + n, out);
    return ec == std::errc() && ptr == buf + n && std::isfinite(out);
}

}  // namespace tensile::table_cells
