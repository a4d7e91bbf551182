// Reads a recorded run from delimited text: the table CSV that `tensile-sim
// --format table` and `tensilectl export` write (header
// `time_s,force_N,extension_mm,crosshead_mm`, extra columns ignored), and the
// usual variants a lab has lying around: `;` or tab separators, decimal
// commas, units in the header (`force_kN`, `Force [lbf]`, `ext (in)`) or in a
// row under it, notes above it and a byte-order mark (table_start.hpp),
// stress and strain columns instead of force and extension, columns picked
// by number, no time column with a known sample rate.
//
// Pure: text in, frames out. Any bad cell stops the read with one message
// naming the line, the column and what was expected; nothing half-read is
// returned.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "engine/frame.hpp"
#include "engine/result.hpp"
#include "engine/units.hpp"

namespace tensile {

struct TableLayout {
    // 1-based column numbers; 0 means 'find it by the header'.
    int time_column = 0;
    int force_column = 0;
    int extension_column = 0;
    int crosshead_column = 0;
    // Units when the header doesn't say; a header unit wins over nothing, a
    // unit given here wins over the header.
    std::optional<ForceUnit> force_unit;
    std::optional<LengthUnit> length_unit;
    double time_scale = 1.0;          // seconds per time unit in the file
    std::optional<double> rate_hz;    // when there is no time column
    // The specimen, for tables that give stress or strain instead of force or
    // extension (force = stress·S0, extension = strain·L0); without them such
    // tables are refused.
    std::optional<double> area_mm2;
    std::optional<double> gauge_length_mm;
};

struct Table {
    std::vector<Frame> frames;
    std::vector<std::string> notes;   // how columns were understood, for the user
};

// Receives frames one by one as they are read, so a long run never has to
// sit in memory twice.
class FrameSink {
public:
    virtual ~FrameSink() = default;
    virtual void take(const Frame& frame) = 0;
    // Several frames in order, as take() one by one would; a sink on a hot
    // path overrides it to save a virtual call per frame.
    virtual void take_all(std::span<const Frame> frames) {
        for (const auto& f : frames) take(f);
    }
    // Every few thousand rows: the text before `offset` has been read and
    // will not be looked at again (a reader of a mapped file may release it).
    virtual void passed(std::size_t /*offset*/) {}
};

struct TableInfo {
    std::size_t frames = 0;
    std::vector<std::string> notes;
};

// Streams the rows into `sink`. On an error the sink has seen the rows before
// it; callers that must not act on part of a file wait for the outcome.
Result<TableInfo> scan_table(std::string_view text, const TableLayout& layout, FrameSink& sink);

// The whole table in memory.
Result<Table> read_table(std::string_view text, const TableLayout& layout = {});

// Rough number of data rows, from the text size and the first lines' length:
// enough to reserve memory once.
std::size_t estimate_rows(std::string_view text);

// Parses "time=1,force=2,extension=3,crosshead=4" into a layout.
Result<TableLayout> parse_column_spec(std::string_view spec, TableLayout base = {});

}  // namespace tensile
