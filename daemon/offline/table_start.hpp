// Where the table begins in a recorded run's text, as exported by the
// instruments and spreadsheets a lab has: a UTF-8 byte-order mark (spreadsheet
// "CSV UTF-8" exports), lines of notes before the column names (specimen,
// operator, date, machine settings), and a row of units under the names
// ("s,kN,mm"). The reader starts at the header this finds and takes the units
// row's units for columns whose names carry none. Also the units a column
// may carry that the engine's own units (engine/units.hpp) do not cover.
//
// The rule: the header is the last text line before the first data row (a
// line whose first cell is a number); when that line holds only units and a
// text line stands above it, it is the units row and the line above is the
// header. Everything above the header is preamble and is skipped. Only the
// first lines are looked at (max_lines); a file whose data starts later is
// read from its top as before, and the reader names what is wrong there.
//
// Pure: text in, positions out. No errors of its own.
#pragma once

#include <cstddef>
#include <optional>
#include <string_view>

namespace tensile {

struct TableStart {
    static constexpr std::size_t none = static_cast<std::size_t>(-1);
    std::size_t begin = 0;        // offset where reading starts (past a byte-order mark and the preamble)
    std::size_t lines_before = 0; // lines skipped before `begin`, for line numbers in messages
    std::size_t preamble_lines = 0;  // of those, lines of notes (not blank, not '#')
    std::size_t units_at = none;  // offset of the units row under the header, if any
};

constexpr std::size_t table_start_max_lines = 200;

TableStart locate_table(std::string_view text);

// True when every non-empty cell of the line names a unit (N, kN, mm, s, %,
// MPa...; with or without brackets) and at least one does.
bool is_units_row(std::string_view line, char sep);

// A unit written in a units-row cell or in a header's brackets, without the
// brackets, quotes and spaces around it ("[kN]" → "kN", "(mm)" → "mm").
std::string_view bare_unit(std::string_view cell);

// MPa per unit of a stress column (MPa, N/mm2, psi, ksi, GPa) and the
// fraction per unit of a strain column (%, pct, mm/mm, in/in, -); nullopt
// for anything else.
std::optional<double> stress_MPa_per(std::string_view unit);
std::optional<double> strain_per(std::string_view unit);

}  // namespace tensile
