// Delimited-text reader for recorded runs; see table_reader.hpp.
#include "table_reader.hpp"

#include "plain_number.hpp"
#include "table_cells.hpp"
#include "table_start.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cstdint>
#include <cstring>
#include <cmath>

namespace tensile {

namespace {

using table_cells::parse_fast;
using table_cells::parse_number;
using table_cells::trim;

std::string lower(std::string_view s) {
    std::string out(s);
    for (auto& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return out;
}

// Splits on `sep`, reusing `cells`.
void split(std::string_view line, char sep, std::vector<std::string_view>& cells) {
    cells.clear();
    std::size_t start = 0;
    while (true) {
        const std::size_t at = line.find(sep, start);
        cells.push_back(trim(line.substr(start, at == std::string_view::npos ? std::string_view::npos : at - start)));
        if (at == std::string_view::npos) break;
        start = at + 1;
    }
}

// Stress and strain stand in for force and extension when a table has only
// those (a curve exported as stress–strain): force = stress·S0, extension =
// strain·L0.
enum class Quantity { time, force, extension, crosshead, stress, strain, other };
constexpr int quantities = 6;

struct HeaderColumn {
    Quantity quantity = Quantity::other;
    std::string unit;  // as written, lower case; empty when none
};

// The lower-case words of a column name ("Crosshead position 1" → crosshead,
// position, 1).
std::vector<std::string> words_of(std::string_view name) {
    std::vector<std::string> words;
    std::string word;
    for (char ch : name) {
        if (std::isalnum(static_cast<unsigned char>(ch))) {
            word += static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
        } else if (!word.empty()) {
            words.push_back(std::move(word));
            word.clear();
        }
    }
    if (!word.empty()) words.push_back(std::move(word));
    return words;
}

// What a column name says, by its words: instruments and spreadsheets name
// the same channel many ways ("Force", "Load (kN)", "Standard force [kN]",
// "Test time (s)", "Crosshead position", "Displacement", "Strain 1 (%)").
// Derived or other channels are left alone: true stress and strain, rates
// and speeds, energies, temperatures, peaks, counters. A name that says
// nothing we know stays `other`, and the caller asks for --columns.
Quantity quantity_named(const std::vector<std::string>& words) {
    const auto has = [&](std::initializer_list<std::string_view> any) {
        return std::any_of(words.begin(), words.end(), [&](const std::string& w) {
            return std::find(any.begin(), any.end(), w) != any.end();
        });
    };
    if (words.empty()) return Quantity::other;
    if (has({"true", "rate", "speed", "velocity", "energy", "work", "temperature", "temp", "max", "maximum", "peak",
             "min", "minimum", "cycle", "cycles", "count", "index", "sample", "no", "number", "step"}))
        return Quantity::other;
    if (words.size() == 1) {  // the short names of our own tables
        if (words[0] == "t") return Quantity::time;
        if (words[0] == "f") return Quantity::force;
        if (words[0] == "xh") return Quantity::crosshead;
        if (words[0] == "ext") return Quantity::extension;
    }
    // The crosshead first: "crosshead extension" is the crosshead's.
    if (has({"crosshead", "position", "displacement", "stroke", "actuator"})) return Quantity::crosshead;
    if (has({"extension", "extensometer"})) return Quantity::extension;
    if (has({"force", "load"})) return Quantity::force;
    if (has({"stress"})) return Quantity::stress;
    if (has({"strain"})) return Quantity::strain;
    if (has({"time"})) return Quantity::time;
    return Quantity::other;
}

// "force_kN", "Force [kN]", "force (kN)", "F" → force in kN.
HeaderColumn understand(std::string_view raw) {
    // Names compare in lower case; units keep their case (SI: mN is not MN).
    std::string_view name = trim(raw);
    std::string_view unit;
    // The unit is in the last brackets: "Tensile strain (Strain 1) (%)".
    if (auto open = name.find_last_of("[("); open != std::string_view::npos) {
        const auto close = name.find_first_of("])", open);
        unit = trim(name.substr(open + 1, close == std::string_view::npos ? std::string_view::npos : close - open - 1));
        name = trim(name.substr(0, open));
    } else if (auto us = name.rfind('_'); us != std::string_view::npos) {
        // "time_s" ends in its unit; "test_time" in a word of its name.
        const auto tail = name.substr(us + 1);
        if (quantity_named(words_of(tail)) == Quantity::other) {
            unit = tail;
            name = name.substr(0, us);
        }
    }
    HeaderColumn c;
    c.unit = std::string(unit);
    c.quantity = quantity_named(words_of(name));
    return c;
}

std::string show(std::string_view cell) {
    std::string s(cell.substr(0, 40));
    return "'" + s + (cell.size() > 40 ? "...'" : "'");
}

const char* quantity_name(Quantity q) {
    switch (q) {
        case Quantity::time: return "time";
        case Quantity::force: return "force";
        case Quantity::extension: return "extension";
        case Quantity::crosshead: return "crosshead";
        case Quantity::stress: return "stress";
        case Quantity::strain: return "strain";
        case Quantity::other: return "other";
    }
    return "?";
}

// A plain data row read straight from the text, without finding its end
// first: every wanted cell a plain number (or empty) ending at the separator,
// the row ending at '\n', "\r\n" or the end of the text, extra columns
// skipped. Returns where the next row starts (text.size() + 1 at the end, as
// the careful path counts), or 0 when the row needs the careful path, which
// reads it again and names any fault.
std::size_t fast_row(std::string_view text, std::size_t pos, char sep, char point,
                     const std::vector<int>& quantity_at, double* const dest[quantities]) {
    const char* p = text.data() + pos;
    const char* const end = text.data() + text.size();
    const std::size_t wanted = quantity_at.size();
    for (std::size_t column = 0; column < wanted; ++column) {
        if (column > 0) {
            if (p == end || *p != sep) return 0;
            ++p;
        }
        const int q = quantity_at[column];
        if (q < 0) {
            while (p < end && *p != sep && *p != '\n') ++p;
            continue;
        }
        p = plain_number::read(p, end, point, *dest[q]);
        if (!p) return 0;
    }
    if (p == end) return text.size() + 1;
    if (*p == '\n') return static_cast<std::size_t>(p + 1 - text.data());
    if (*p == '\r') {
        if (p + 1 == end) return text.size() + 1;
        return p[1] == '\n' ? static_cast<std::size_t>(p + 2 - text.data()) : 0;
    }
    if (*p != sep) return 0;
    const void* nl = std::memchr(p, '\n', static_cast<std::size_t>(end - p));
    return nl ? static_cast<std::size_t>(static_cast<const char*>(nl) + 1 - text.data()) : text.size() + 1;
}

}  // namespace

Result<TableLayout> parse_column_spec(std::string_view spec, TableLayout layout) {
    std::vector<std::string_view> parts;
    split(spec, ',', parts);
    for (auto part : parts) {
        const auto eq = part.find('=');
        const std::string key = lower(trim(part.substr(0, eq)));
        int number = 0;
        const auto value = eq == std::string_view::npos ? std::string_view{} : trim(part.substr(eq + 1));
        auto [ptr, ec] = std::from_chars(value.data(), value.data() + value.size(), number);
        if (eq == std::string_view::npos || ec != std::errc() || ptr != value.data() + value.size() || number < 1)
            return Error{"--columns: '" + std::string(part) +
                         "' should be NAME=NUMBER with a column number from 1, e.g. force=2"};
        if (key == "time") layout.time_column = number;
        else if (key == "force") layout.force_column = number;
        else if (key == "extension") layout.extension_column = number;
        else if (key == "crosshead") layout.crosshead_column = number;
        else
            return Error{"--columns: unknown column name '" + key + "'; expected time, force, extension or crosshead"};
    }
    return layout;
}

namespace {

// Gathers frames and hands them on a few hundred at a time (take_all), so a
// sink that queues them for another thread pays one virtual call per batch,
// not per row. Everything gathered is handed on before passed() and when the
// read ends, so the sink sees the same frames in the same order as before.
class Batch final : public FrameSink {
public:
    explicit Batch(FrameSink& sink) : sink_(sink) {}
    void take(const Frame& f) override {
        frames_[count_++] = f;
        if (count_ == capacity) flush();
    }
    void passed(std::size_t offset) override {
        flush();
        sink_.passed(offset);
    }
    void flush() {
        if (count_ > 0) sink_.take_all({frames_, count_});
        count_ = 0;
    }

private:
    static constexpr std::size_t capacity = 256;
    FrameSink& sink_;
    Frame frames_[capacity];
    std::size_t count_ = 0;
};

Result<TableInfo> scan_rows(std::string_view text, const TableLayout& layout, Batch& sink);

// A line whose first cell holds words, not a number (nor nothing).
bool starts_with_words(std::string_view line, char sep, bool decimal_comma) {
    const auto cell = trim(line.substr(0, line.find(sep)));
    double ignored = 0;
    return !cell.empty() && !parse_number(cell, decimal_comma, ignored);
}

// The lines of words in `rest` when no row of numbers follows (a footer);
// nullopt as soon as a line starts with a number.
std::optional<std::size_t> footer_lines(std::string_view rest) {
    std::size_t words = 0;
    while (!rest.empty()) {
        const std::size_t nl = std::min(rest.find('\n'), rest.size());
        const auto line = trim(rest.substr(0, nl));
        rest.remove_prefix(std::min(nl + 1, rest.size()));
        if (line.empty() || line.front() == '#') continue;
        const unsigned char c0 = static_cast<unsigned char>(line.front());
        if (static_cast<unsigned>(c0 - '0') < 10u || c0 == '-' || c0 == '+' || c0 == '.' || c0 == ',' || c0 == ';') return std::nullopt;
        ++words;
    }
    return words;
}

// A stress column stands in for force only with S0 known, a strain column
// for extension only with L0 known, and each only with its unit stated: a
// bare 'strain' could be a fraction or a percentage, and a guess would scale
// every strain result by 100.
// One stand-in column: its unit gives `scale`, or the message says what is
// missing (the specimen dimension it needs, or a unit we know).
std::optional<std::string> check_stand_in(int column, const char* name, const std::string& unit, bool dimension_given,
                                          const char* stands_for, const char* give,
                                          std::optional<double> (*scale_of)(std::string_view), const char* expected,
                                          double& scale) {
    const std::string where = "column " + std::to_string(column) + " (" + name + ")";
    if (!dimension_given) return where + " stands in for " + stands_for + "; give it (" + give + ")";
    const auto factor = scale_of(unit);
    if (!factor)
        return where + (unit.empty() ? " gives no unit" : " has unit '" + unit + "', not one we know") + "; expected " +
               expected + " or in a units row";
    scale = *factor;
    return std::nullopt;
}

std::optional<std::string> check_stand_ins(const int col[quantities], const std::string unit[2], const TableLayout& layout,
                                           double& stress_scale, double& strain_scale, std::vector<std::string>& notes) {
    if (col[4] > 0) {
        if (auto bad = check_stand_in(col[4], "stress", unit[0], layout.area_mm2.has_value(),
                                      "force, which needs the cross-section S0", "--area, --width and --thickness...",
                                      stress_MPa_per, "MPa, N/mm2, psi or ksi in its name (stress_MPa, Stress (MPa))",
                                      stress_scale))
            return bad;
        notes.push_back("force from the stress column × S0");
    }
    if (col[5] > 0) {
        if (auto bad = check_stand_in(col[5], "strain", unit[1], layout.gauge_length_mm.has_value(),
                                      "extension, which needs the gauge length L0", "--gauge-length", strain_per,
                                      "%, pct, mm/mm, in/in or - in its name (strain_pct, Strain (%))", strain_scale))
            return bad;
        notes.push_back("extension from the strain column × L0");
    }
    return std::nullopt;
}

}  // namespace

Result<TableInfo> scan_table(std::string_view text, const TableLayout& layout, FrameSink& sink) {
    Batch batch(sink);
    auto outcome = scan_rows(text, layout, batch);
    batch.flush();  // on an error too: the sink sees the rows before it
    return outcome;
}

namespace {

Result<TableInfo> scan_rows(std::string_view text, const TableLayout& layout, Batch& sink) {
    TableInfo table;
    std::vector<std::string_view> cells, units;
    // Past a byte-order mark and any notes above the column names.
    const TableStart start = locate_table(text);
    std::size_t pos = start.begin, line_no = start.lines_before;
    char sep = 0;
    bool decimal_comma = false;
    int col[quantities] = {layout.time_column, layout.force_column, layout.extension_column, layout.crosshead_column, 0, 0};
    double force_scale = layout.force_unit ? newtons_per(*layout.force_unit) : 1.0;
    double length_scale[2] = {1.0, 1.0};
    if (layout.length_unit) length_scale[0] = length_scale[1] = millimetres_per(*layout.length_unit);
    double time_scale = layout.time_scale;
    bool header_seen = false;
    std::size_t width = 0;
    int wanted = 0;                 // the last column read
    std::vector<int> quantity_at;   // column → quantity read from it (-1: skipped)

    // Stress (as MPa) and strain (as a fraction) when they stand in for force
    // and extension, and the factors that bring them there.
    double stress_MPa = absent, strain = absent;
    double stress_scale = 1.0, strain_scale = 1.0;
    std::string stand_in_unit[2];  // as the header gives them: stress, strain

    // Scales a row's values into frame units and hands the frame on.
    auto deliver = [&](Frame& f) {
        if (col[0] == 0) f.time_s = static_cast<double>(table.frames) / *layout.rate_hz;
        else f.time_s *= time_scale;
        if (col[4] > 0) f.force_N = stress_MPa * stress_scale * *layout.area_mm2;
        else f.force_N *= force_scale;
        if (col[5] > 0) f.extension_mm = strain * strain_scale * *layout.gauge_length_mm;
        else f.extension_mm *= length_scale[0];
        f.crosshead_mm *= length_scale[1];
        sink.take(f);
    };

    while (pos < text.size()) {
        // Once the first data row has set the layout, rows that start with a
        // number go the short way; anything else (comments, blank lines,
        // quotes, bad cells) takes the careful path below.
        if (table.frames > 0) {
            const unsigned char c0 = static_cast<unsigned char>(text[pos]);
            if (static_cast<unsigned>(c0 - '0') < 10u || c0 == '-' || c0 == '.') {
                Frame f;
                double* const dest[quantities] = {&f.time_s, &f.force_N, &f.extension_mm, &f.crosshead_mm, &stress_MPa, &strain};
                if (const std::size_t next = fast_row(text, pos, sep, decimal_comma ? ',' : '.', quantity_at, dest)) {
                    pos = next;
                    ++line_no;
                    deliver(f);
                    if ((++table.frames & 0x3fff) == 0) sink.passed(pos);
                    continue;
                }
            }
        }
        const void* nl = std::memchr(text.data() + pos, '\n', text.size() - pos);
        const std::size_t end = nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - text.data()) : text.size();
        std::string_view line = text.substr(pos, end - pos);
        const bool units_row = pos == start.units_at;  // read with the header
        pos = end + 1;
        ++line_no;
        if (!line.empty() && line.back() == '\r') line.remove_suffix(1);
        if (units_row || line.empty() || line.front() == '#' || trim(line).empty()) continue;
        // Lines of words after the last row (a summary some instruments
        // append) end the table. A line of words with rows still to come is
        // no footer: it is read below and refused, naming the line.
        if (table.frames > 0 && starts_with_words(line, sep, decimal_comma)) {
            if (const auto footer = footer_lines(text.substr(std::min(pos, text.size())))) {
                table.notes.push_back(std::to_string(*footer + 1) + " line(s) of words after the last row ignored");
                break;
            }
        }

        if (!sep) {
            // The separator is whichever of tab, ';' or ',' the first line uses
            // most; ';' or tab with commas inside numbers means decimal commas.
            const auto count = [&](char c) { return std::count(line.begin(), line.end(), c); };
            sep = count('\t') > 0 ? '\t' : count(';') > 0 ? ';' : ',';
        }
        if (!header_seen) {
            split(line, sep, cells);
            header_seen = true;
            double probe = 0;
            if (!parse_number(cells[0], sep != ',', probe)) {  // a header line
                width = cells.size();
                units.clear();
                if (start.units_at != TableStart::none) {
                    const std::string_view rest = text.substr(start.units_at);
                    split(rest.substr(0, rest.find('\n')), sep, units);
                }
                for (std::size_t c = 0; c < cells.size(); ++c) {
                    auto h = understand(cells[c]);
                    if (h.unit.empty() && c < units.size()) h.unit = std::string(bare_unit(units[c]));
                    if (h.quantity == Quantity::other) continue;
                    int& slot = col[static_cast<int>(h.quantity)];
                    if (slot == 0) slot = static_cast<int>(c + 1);
                    if (slot != static_cast<int>(c + 1) || h.unit.empty()) continue;
                    if (h.quantity == Quantity::force && !layout.force_unit) {
                        auto u = parse_force_unit(h.unit);
                        if (!u) return Error{"line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                             ": unknown force unit '" + h.unit + "'; expected N, kN, lbf or kgf"};
                        force_scale = newtons_per(*u);
                    } else if ((h.quantity == Quantity::extension || h.quantity == Quantity::crosshead) &&
                               !layout.length_unit) {
                        auto u = parse_length_unit(h.unit);
                        if (!u) return Error{"line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                             ": unknown length unit '" + h.unit + "'; expected mm, um or in"};
                        length_scale[h.quantity == Quantity::extension ? 0 : 1] = millimetres_per(*u);
                    } else if (h.quantity == Quantity::stress || h.quantity == Quantity::strain) {
                        stand_in_unit[h.quantity == Quantity::stress ? 0 : 1] = h.unit;  // judged below, if used
                    } else if (h.quantity == Quantity::time && layout.time_scale == 1.0) {
                        if (h.unit == "ms") time_scale = 0.001;
                        else if (h.unit == "min") time_scale = 60.0;
                        else if (h.unit != "s")
                            return Error{"line " + std::to_string(line_no) + ", column " + std::to_string(c + 1) +
                                         ": unknown time unit '" + h.unit + "'; expected s, ms or min"};
                    }
                }
                continue;
            }
            width = cells.size();
            if (col[1] == 0) {  // no header, no layout: the table order
                col[0] = 1;
                col[1] = 2;
                col[2] = width >= 3 ? 3 : 0;
                col[3] = width >= 4 ? 4 : 0;
            }
        }
        if (table.frames == 0) {
            // Stress and strain only stand in for a missing force or extension.
            if (col[1] > 0) col[4] = 0;
            if (col[2] > 0) col[5] = 0;
            if (auto bad = check_stand_ins(col, stand_in_unit, layout, stress_scale, strain_scale, table.notes))
                return Error{*bad};
        }
        if (col[1] == 0 && col[4] == 0)
            return Error{"no force column: name one in the header (force, force_N, force_kN..., or stress_MPa with "
                         "the cross-section given) or give --columns force=N"};
        if (col[0] == 0 && !layout.rate_hz)
            return Error{"no time column: name one in the header (time_s) or give --rate HZ for evenly sampled data"};
        if (table.frames == 0) {
            // Decimal commas: only possible when ',' is not the separator.
            decimal_comma = sep != ',' && line.find(',') != std::string_view::npos;
            for (int q = 0; q < quantities; ++q)
                if (col[q] > 0) wanted = std::max(wanted, col[q]);
            quantity_at.assign(static_cast<std::size_t>(wanted), -1);
            for (int q = 0; q < quantities; ++q)
                if (col[q] > 0) quantity_at[static_cast<std::size_t>(col[q] - 1)] = q;
        }

        Frame f;
        double* dest[quantities] = {&f.time_s, &f.force_N, &f.extension_mm, &f.crosshead_mm, &stress_MPa, &strain};
        // One pass over the row: each wanted cell parsed where it lies.
        const char* p = line.data();
        const char* const row_end = p + line.size();
        int column = 0;
        for (; column < wanted; ++column) {
            if (column > 0) {
                if (p >= row_end) break;
                ++p;  // the separator
            }
            const char* cell_end = p;
            const int q = quantity_at[column];
            if (q < 0) {
                cell_end = static_cast<const char*>(std::memchr(p, sep, static_cast<std::size_t>(row_end - p)));
                p = cell_end ? cell_end : row_end;
                continue;
            }
            if (!parse_fast(p, row_end, sep, decimal_comma, *dest[q], cell_end)) {
                const char* stop = static_cast<const char*>(std::memchr(p, sep, static_cast<std::size_t>(row_end - p)));
                cell_end = stop ? stop : row_end;
                const auto cell = trim(std::string_view(p, static_cast<std::size_t>(cell_end - p)));
                if (!parse_number(cell, decimal_comma, *dest[q]))
                    return Error{"line " + std::to_string(line_no) + ", column " + std::to_string(column + 1) + " (" +
                                 quantity_name(static_cast<Quantity>(q)) + "): " + show(cell) +
                                 " is not a number; expected a decimal number such as 1523.4, or an empty cell"};
            }
            p = cell_end;
        }
        if (column < wanted) {
            split(line, sep, cells);
            return Error{"line " + std::to_string(line_no) + ": " + std::to_string(cells.size()) + " columns, but " +
                         quantity_name(static_cast<Quantity>(quantity_at[wanted - 1])) + " is column " +
                         std::to_string(wanted) + "; expected " + std::to_string(std::max<std::size_t>(width, wanted)) +
                         " columns as on the first line"};
        }
        deliver(f);
        if ((++table.frames & 0x3fff) == 0) sink.passed(pos);
    }
    if (table.frames == 0) return Error{"no data rows: expected lines of numbers after an optional header"};
    table.notes.insert(table.notes.begin(), std::string("separator '") + (sep == '\t' ? "tab" : std::string(1, sep)) + "'" +
                          (decimal_comma ? ", decimal comma" : "") +
                          (start.preamble_lines > 0 ? ", " + std::to_string(start.preamble_lines) +
                                                          " line(s) of notes above the column names skipped"
                                                    : std::string()) +
                          (start.units_at != TableStart::none ? ", units from the row under the names" : ""));
    return table;
}

}  // namespace

Result<Table> read_table(std::string_view text, const TableLayout& layout) {
    struct Collect : FrameSink {
        std::vector<Frame> frames;
        void take(const Frame& f) override { frames.push_back(f); }
    } collect;
    collect.frames.reserve(estimate_rows(text));
    auto info = scan_table(text, layout, collect);
    if (!info) return Error{info.error()};
    return Table{std::move(collect.frames), std::move(info->notes)};
}

std::size_t estimate_rows(std::string_view text) {
    const std::size_t sample = std::min<std::size_t>(text.size(), 64 * 1024);
    const auto lines = static_cast<std::size_t>(std::count(text.begin(), text.begin() + static_cast<long>(sample), '\n'));
    if (lines == 0) return 1;
    return text.size() / (sample / lines) + 1;
}

}  // namespace tensile
