// Parser for key=value lines (`keyvalue` in wire-formats.md):
//     t=184233100 F=1523.42 ext=0.01234 xh=1.2345
// Pairs are separated by spaces or commas; a bare word after a pair is that
// pair's unit suffix (`F=1523.42 N`). Error policy: a line with a pair lacking
// `=`, an empty or repeated key, a bad value or bad stamp is rejected whole
// (bad record, its bytes counted as resync bytes). Unknown keys are counted and
// ignored so devices may add fields. A channel absent from a line simply has no
// sample at that instant. Once a stream has stamped its records, a line
// without the time key is bad (see text_line_parser.hpp: a torn fragment
// glued before "t=" turns it into an unknown key), and so is one with an
// unknown key ending in the time key whose value is the next stamp. Nothing throws after
// construction.
#include <array>
#include <optional>
#include <stdexcept>

#include "text_line_parser.hpp"
#include "text_value.hpp"

namespace tensile::drivers {

namespace {

constexpr std::size_t max_channels = 64;

class KeyValueParser final : public TextLineParser {
public:
    explicit KeyValueParser(FormatConfig cfg) : TextLineParser(std::move(cfg)) {
        if (config_.channels.empty() || config_.channels.size() > max_channels)
            throw std::invalid_argument("keyvalue format: give 1 to 64 channels");
        if (config_.decimal_comma)
            throw std::invalid_argument("keyvalue format: decimal_comma is not available (pairs may be separated by commas)");
        for (std::size_t i = 0; i < config_.channels.size(); ++i) {
            const auto& k = config_.channels[i].key;
            if (k.empty() || k.find_first_of("=, \t") != std::string::npos)
                throw std::invalid_argument("keyvalue format: channel " + config_.channels[i].name +
                                            " needs a key without '=', ',' or spaces");
            for (std::size_t j = 0; j < i; ++j)
                if (config_.channels[j].key == k)
                    throw std::invalid_argument("keyvalue format: key " + k + " is used by two channels");
            if (k == config_.time_key || k == config_.counter_key)
                throw std::invalid_argument("keyvalue format: key " + k + " is also the time or counter key");
        }
        if (!config_.counter_key.empty() && !(config_.nominal_rate_hz > 0))
            throw std::invalid_argument("keyvalue format: counter_key needs nominal_rate_hz > 0");
    }

private:
    void on_line(std::string_view line, std::vector<Sample>& out) override {
        if (line.front() == '#') {
            deliver_message(line);
            return;
        }
        std::array<std::string_view, max_channels> values{};  // value text (with suffix) per channel
        std::array<bool, max_channels> seen{};
        std::string_view stamp_text;
        bool have_stamp = false;
        bool stamp_is_counter = false;
        std::uint64_t unknown = 0;

        // The current pair's value view grows to cover a following unit word.
        std::string_view* current = nullptr;
        std::string_view unknown_value;
        std::optional<std::uint64_t> glued_stamp;  // see below
        std::size_t i = 0;
        const std::size_t n = line.size();
        while (i < n) {
            while (i < n && (line[i] == ' ' || line[i] == ',' || line[i] == '\t')) ++i;
            if (i == n) break;
            const std::size_t start = i;
            while (i < n && line[i] != ' ' && line[i] != ',' && line[i] != '\t') ++i;
            const std::string_view tok = line.substr(start, i - start);
            const std::size_t eq = tok.find('=');
            if (eq == std::string_view::npos) {
                // A unit word: only valid right after a value, separated by spaces only.
                if (!current || current->empty()) return discard(line.size(), true);
                const char* vbeg = current->data();
                if (line.substr(static_cast<std::size_t>(vbeg + current->size() - line.data()),
                                static_cast<std::size_t>(tok.data() - (vbeg + current->size())))
                        .find(',') != std::string_view::npos)
                    return discard(line.size(), true);
                *current = std::string_view(vbeg, static_cast<std::size_t>(tok.data() + tok.size() - vbeg));
                current = nullptr;  // at most one suffix
                continue;
            }
            const std::string_view key = tok.substr(0, eq);
            const std::string_view val = tok.substr(eq + 1);
            if (key.empty() || val.empty()) return discard(line.size(), true);
            if (key == config_.time_key || (!config_.counter_key.empty() && key == config_.counter_key)) {
                if (have_stamp) return discard(line.size(), true);
                have_stamp = true;
                stamp_is_counter = !config_.counter_key.empty() && key == config_.counter_key;
                stamp_text = val;
                current = nullptr;
                continue;
            }
            std::size_t c = 0;
            while (c < config_.channels.size() && config_.channels[c].key != key) ++c;
            if (c == config_.channels.size()) {
                ++unknown;
                if (ends_with_stamp_key(key)) {
                    const bool counter = !config_.counter_key.empty() && key.ends_with(config_.counter_key);
                    if (const auto v = counter ? read_unsigned(val) : read_stamp_us(val, config_.time_us_per_unit)) glued_stamp = *v;
                }
                unknown_value = val;
                current = &unknown_value;  // an unknown pair may carry a suffix too
                continue;
            }
            if (seen[c]) return discard(line.size(), true);
            seen[c] = true;
            values[c] = val;
            current = &values[c];
        }

        Record& r = record_;  // a member: no per-line construction of 64 slots
        r.kind = Stamp::none;
        r.stamp = 0;
        r.bytes = line.size();
        if (have_stamp) {
            const auto v = stamp_is_counter ? read_unsigned(stamp_text) : read_stamp_us(stamp_text, config_.time_us_per_unit);
            if (!v) return discard(line.size(), true);
            r.kind = stamp_is_counter ? Stamp::counter : Stamp::device_us;
            r.stamp = *v;
            // "t=12759999 Ft=12761000 F=...": a torn record cut right after a key
            // ("t=12759999 F") glued to the next; the unknown key ends with the
            // stamp key and holds the next stamp. A device's own extra field
            // ("count=5") does not carry on from the record's stamp.
            if (glued_stamp && next_stamp_of(r.stamp, *glued_stamp)) return discard(line.size(), true);
        }
        bool any = false;
        for (std::size_t c = 0; c < config_.channels.size(); ++c) {
            r.present[c] = seen[c];
            if (!seen[c]) continue;
            r.readings[c] = read_value(values[c], config_.channels[c].unit);
            if (r.readings[c].kind == ReadingKind::bad) return discard(line.size(), true);
            any = true;
        }
        if (!any && !have_stamp && unknown == 0) return discard(line.size(), true);
        counters_.stream.unknown_keys += unknown;
        accept(r, out);
    }

    [[nodiscard]] bool ends_with_stamp_key(std::string_view key) const {
        auto ends = [&](const std::string& k) { return !k.empty() && key.size() > k.size() && key.ends_with(k); };
        return ends(config_.time_key) || ends(config_.counter_key);
    }

    Record record_;
};

}  // namespace

std::unique_ptr<Parser> make_keyvalue_parser(const FormatConfig& cfg) { return std::make_unique<KeyValueParser>(cfg); }

}  // namespace tensile::drivers
