// Finding the header of a recorded run's table; see table_start.hpp.
#include "table_start.hpp"

#include <algorithm>
#include <array>
#include <vector>

#include "engine/units.hpp"
#include "table_cells.hpp"

namespace tensile {

namespace {

using table_cells::trim;

// The separator a line uses, as the reader decides it: tab, then ';', then ','.
char separator_of(std::string_view line) {
    if (line.find('\t') != std::string_view::npos) return '\t';
    if (line.find(';') != std::string_view::npos) return ';';
    return ',';
}

std::string_view first_cell(std::string_view line, char sep) {
    return trim(line.substr(0, line.find(sep)));
}

// A number as a data row starts with one, read as the row reader reads it
// (a decimal comma with any separator but ','). Dates ("2024-01-02") and
// times ("12:00:01") are not.
bool looks_numeric(std::string_view cell, char sep) {
    double ignored = 0;
    return !cell.empty() && table_cells::parse_number(cell, sep != ',', ignored);
}

// Units a units row may hold besides the reader's own force, length and time
// units: those of columns it skips (stress, strain, energy, temperature...).
// Lower case; compared without case.
constexpr std::array other_units{"%",  "mpa",  "gpa", "kpa", "psi", "ksi", "n/mm2", "n/mm²", "mm/mm", "in/in",
                                 "-",  "1",    "j",   "°c",  "c",   "k",   "hz",    "v",     "mv",    "mv/v",
                                 "mm/min", "mm/s", "in/min", "1/s", "%/s", "%/min", "mpa/s", "n/s", "kn/s"};

bool is_unit(std::string_view u) {
    if (parse_force_unit(u) || parse_length_unit(u)) return true;
    if (u == "s" || u == "ms" || u == "min" || stress_MPa_per(u) || strain_per(u)) return true;
    std::string lower(u);
    for (auto& c : lower) c = static_cast<char>(c >= 'A' && c <= 'Z' ? c - 'A' + 'a' : c);
    return std::find(other_units.begin(), other_units.end(), lower) != other_units.end();
}

}  // namespace

std::string_view bare_unit(std::string_view cell) {
    cell = trim(cell);
    if (cell.size() >= 2 && ((cell.front() == '[' && cell.back() == ']') || (cell.front() == '(' && cell.back() == ')'))) {
        cell.remove_prefix(1);
        cell.remove_suffix(1);
    }
    return trim(cell);
}

// NIST SP 811: 1 psi = 6.894 757 kPa.
std::optional<double> stress_MPa_per(std::string_view u) {
    if (u == "MPa" || u == "N/mm2" || u == "N/mm²" || u == "N/mm^2") return 1.0;
    if (u == "psi") return 6.894757e-3;
    if (u == "ksi") return 6.894757;
    if (u == "GPa") return 1000.0;
    return std::nullopt;
}

std::optional<double> strain_per(std::string_view u) {
    if (u == "%" || u == "pct") return 0.01;
    if (u == "mm/mm" || u == "in/in" || u == "-" || u == "1") return 1.0;
    return std::nullopt;
}

bool is_units_row(std::string_view line, char sep) {
    bool any = false;
    std::size_t start = 0;
    while (start <= line.size()) {
        const std::size_t at = std::min(line.find(sep, start), line.size());
        const std::string_view unit = bare_unit(line.substr(start, at - start));
        if (!unit.empty()) {
            if (!is_unit(unit)) return false;
            any = true;
        }
        start = at + 1;
    }
    return any;
}

TableStart locate_table(std::string_view text) {
    TableStart found;
    std::size_t pos = 0;
    if (text.substr(0, 3) == "\xEF\xBB\xBF") pos = 3;  // UTF-8 byte-order mark
    const std::size_t top = pos;

    struct TextLine {
        std::size_t at, line_index;
        std::string_view line;
    };
    std::vector<TextLine> text_lines;  // lines of words before the first data row
    for (std::size_t index = 0; index < table_start_max_lines && pos < text.size(); ++index) {
        const std::size_t nl = std::min(text.find('\n', pos), text.size());
        std::string_view line = text.substr(pos, nl - pos);
        const std::size_t at = pos;
        pos = nl + 1;
        if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
        if (trim(line).empty() || line.front() == '#') continue;
        const char sep = separator_of(line);
        if (!looks_numeric(first_cell(line, sep), sep)) {
            text_lines.push_back({at, index, line});
            continue;
        }
        // The first data row: the header is the text line just above it.
        if (text_lines.empty()) {
            found.begin = top;
            return found;
        }
        std::size_t header = text_lines.size() - 1;
        const char data_sep = sep;
        if (header > 0 && is_units_row(text_lines[header].line, data_sep)) {
            found.units_at = text_lines[header].at;
            --header;
        }
        found.begin = text_lines[header].at;
        found.lines_before = text_lines[header].line_index;
        found.preamble_lines = header;
        return found;
    }
    found.begin = top;  // no data row near the top: read from the top, as before
    return found;
}

}  // namespace tensile
