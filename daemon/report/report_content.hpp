// What a run's record says, in words and numbers, before any file format:
// headings, paragraphs, tables and the curve, built once from ReportData
// (report_data.hpp) and the error budget (uncertainty.hpp). The HTML writer
// (run_report.cpp) and the PDF writer (pdf_report.cpp) only lay this out, so
// the two files always show the same numbers and the same cautions.
//
// Error policy: pure; every part that is absent from the data is said to be
// absent in the content, never invented.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "report_data.hpp"
#include "uncertainty.hpp"

namespace tensile::report {

struct ReportOptions {
    UncertaintyInputs budget;
    double generated_unix_s = 0;  // shown in the footer; 0: left out (tests want stable output)
};

// How a piece of text is set: each writer picks its own look for these.
enum class Tone { plain, strong, good, bad, code };

struct Span {
    std::string text;
    Tone tone = Tone::plain;
};
using Spans = std::vector<Span>;

struct Cell {
    std::string text;
    bool number = false;  // set right-aligned
    Tone tone = Tone::plain;
};

struct Table {
    std::string name;                  // a class for HTML ("results", "events"); may be empty
    std::vector<std::string> columns;  // empty: a key/value table (first cell is the key)
    std::vector<std::vector<Cell>> rows;
};

struct Block {
    enum class Kind { heading, text, fine, caution, table, curve };
    Kind kind = Kind::text;
    Spans spans;  // heading, text, fine, caution
    Table table;  // table
};

struct ReportContent {
    std::string title;     // "Tensile test record: run N"
    std::string subtitle;  // material and state
    std::string short_title;  // for a window or document title
    std::vector<Block> blocks;
    std::vector<CurvePoint> curve;  // for the curve block
    std::vector<CurveMark> marks;
};

ReportContent report_content(const ReportData& d, std::int64_t run, const ReportOptions& options);

// Numbers as the report prints them: %.*g, "-" when not finite. Tests use it
// to find a value in the output.
std::string report_number(double v, int digits = 4);

}  // namespace tensile::report
