// Parser for delimited lines (`lines` in wire-formats.md):
//     <time>,<value>[ <unit>],<value>[ <unit>]...
// Error policy: a record is all or nothing. A wrong field count (torn line), a
// bad number, unit or stamp rejects the whole line: its bytes are counted as
// resync bytes and the line as a bad record. Over-long lines are dropped whole.
// `#` lines go to the message handler. Nothing throws after construction.
#include <algorithm>
#include <array>
#include <stdexcept>

#include "text_line_parser.hpp"
#include "text_value.hpp"

namespace tensile::drivers {

namespace {

constexpr std::size_t max_fields = 64;

bool is_unit_word(std::string_view t) {
    if (t.empty() || t == "OVER") return false;
    if (t.size() == 3 && (t[0] == 'n' || t[0] == 'N') && (t[1] == 'a' || t[1] == 'A')) return false;
    return std::all_of(t.begin(), t.end(), [](char c) {
        return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || static_cast<unsigned char>(c) >= 0x80;
    });
}

class LinesParser final : public TextLineParser {
public:
    explicit LinesParser(FormatConfig cfg) : TextLineParser(std::move(cfg)) {
        int highest = -1;
        auto use = [&](int pos, const char* what) {
            if (pos < 0 || pos >= static_cast<int>(max_fields))
                throw std::invalid_argument(std::string("lines format: ") + what +
                                            " must be a field position from 0 to 63");
            highest = std::max(highest, pos);
        };
        if (config_.time_field) use(*config_.time_field, "time_field");
        if (config_.counter_field) use(*config_.counter_field, "counter_field");
        if (config_.time_field && config_.counter_field)
            throw std::invalid_argument("lines format: give time_field or counter_field, not both");
        if (config_.counter_field && !(config_.nominal_rate_hz > 0))
            throw std::invalid_argument("lines format: counter_field needs nominal_rate_hz > 0");
        for (const auto& ch : config_.channels) use(ch.field, ("field of channel " + ch.name).c_str());
        if (config_.decimal_comma && config_.separator == ',')
            throw std::invalid_argument("lines format: decimal_comma needs a separator other than ',' (\";\", tab or space)");
        if (config_.channels.empty() || config_.channels.size() > max_fields)
            throw std::invalid_argument("lines format: give 1 to 64 channels");
        field_count_ = config_.field_count > 0 ? static_cast<std::size_t>(config_.field_count)
                                               : static_cast<std::size_t>(highest + 1);
        if (field_count_ <= static_cast<std::size_t>(highest) || field_count_ > max_fields)
            throw std::invalid_argument("lines format: field_count must cover every configured field (at most 64)");
        for (std::size_t c = 0; c < config_.channels.size(); ++c) record_.present[c] = true;  // every record has every channel
    }

private:
    std::size_t split(std::string_view line, std::array<std::string_view, max_fields>& f) const {
        const char sep = config_.separator;
        std::size_t n = 0;
        if (sep == ' ') {
            // Runs of spaces separate fields; a bare unit word belongs to the number before it.
            std::size_t i = 0;
            while (i < line.size()) {
                while (i < line.size() && line[i] == ' ') ++i;
                if (i == line.size()) break;
                const std::size_t start = i;
                while (i < line.size() && line[i] != ' ') ++i;
                const std::string_view tok = line.substr(start, i - start);
                if (n > 0 && is_unit_word(tok)) {
                    f[n - 1] = std::string_view(f[n - 1].data(), static_cast<std::size_t>(tok.data() + tok.size() - f[n - 1].data()));
                } else {
                    if (n == max_fields) return max_fields + 1;
                    f[n++] = tok;
                }
            }
            return n;
        }
        std::size_t start = 0;
        const char* d = line.data();
        const std::size_t len = line.size();
        for (std::size_t i = 0; i < len; ++i) {
            if (d[i] != sep) continue;
            if (n == max_fields) return max_fields + 1;
            f[n++] = std::string_view(d + start, i - start);
            start = i + 1;
        }
        if (n == max_fields) return max_fields + 1;
        f[n++] = std::string_view(d + start, len - start);
        return n;
    }

    void on_line(std::string_view line, std::vector<Sample>& out) override {
        if (line.front() == '#') {
            deliver_message(line);
            return;
        }
        auto& f = fields_;
        if (split(line, f) != field_count_) return discard(line.size(), true);

        Record& r = record_;  // a member: no per-line construction of 64 slots
        r.kind = Stamp::none;
        r.stamp = 0;
        r.bytes = line.size();
        if (config_.time_field || config_.counter_field) {
            const auto v = config_.time_field ? read_stamp_us(f[static_cast<std::size_t>(*config_.time_field)], config_.time_us_per_unit)
                                              : read_unsigned(f[static_cast<std::size_t>(*config_.counter_field)]);
            if (!v) return discard(line.size(), true);
            r.kind = config_.time_field ? Stamp::device_us : Stamp::counter;
            r.stamp = *v;
        }
        const std::size_t nch = config_.channels.size();
        for (std::size_t c = 0; c < nch; ++c) {
            r.readings[c] = read_value(f[static_cast<std::size_t>(config_.channels[c].field)], config_.channels[c].unit,
                                       config_.decimal_comma);
            if (r.readings[c].kind == ReadingKind::bad) return discard(line.size(), true);
        }
        accept(r, out);
    }

    std::size_t field_count_ = 0;
    std::array<std::string_view, max_fields> fields_;
    Record record_;
};

}  // namespace

std::unique_ptr<Parser> make_lines_parser(const FormatConfig& cfg) { return std::make_unique<LinesParser>(cfg); }

}  // namespace tensile::drivers
