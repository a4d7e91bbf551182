// See text_value.hpp. Numbers go through std::from_chars (locale-free, no
// allocation), which is also what keeps the text parsers fast.
#include "text_value.hpp"

#include <charconv>
#include <cmath>

namespace tensile::drivers {

std::string_view trim(std::string_view s) {
    while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
    while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
    return s;
}

Reading read_value(std::string_view field, const ChannelUnit& unit, bool decimal_comma) {
    field = trim(field);
    if (field.empty()) return {};
    if (decimal_comma) {
        if (const auto comma = field.find(','); comma != std::string_view::npos) {
            // A copy with a point instead; a second comma stays and makes the field bad.
            char buf[96];
            if (field.size() > sizeof buf) return {};
            field.copy(buf, field.size());
            buf[comma] = '.';
            return read_value(std::string_view(buf, field.size()), unit, false);
        }
    }
    if (field == "OVER" || field == "----") return {ReadingKind::overload, 0.0};
    // nan, NaN, -nan: std::from_chars reads them (case-insensitively) as NaN, handled below.

    const char* first = field.data();
    const char* last = first + field.size();
    // from_chars does not take a leading '+'; one sign at most ("+-1" is no number).
    if (*first == '+' && ++first != last && *first == '-') return {};
    double number = 0.0;
    const auto [end, ec] = std::from_chars(first, last, number, std::chars_format::general);
    if (ec == std::errc::result_out_of_range) number = (*first == '-') ? -HUGE_VAL : HUGE_VAL;  // counted out of range
    else if (ec != std::errc{}) return {};
    if (std::isnan(number)) return {ReadingKind::nan, 0.0};

    const std::string_view suffix = trim(std::string_view(end, static_cast<std::size_t>(last - end)));
    double factor = base_per_unit(unit);
    if (!suffix.empty()) {
        // Fast paths for the base units, by far the most common suffixes.
        if (suffix.size() == 1 && suffix[0] == 'N' && std::holds_alternative<ForceUnit>(unit)) return {ReadingKind::number, number};
        if (suffix == "mm" && std::holds_alternative<LengthUnit>(unit)) return {ReadingKind::number, number};
        if (std::holds_alternative<ForceUnit>(unit)) {
            const auto u = parse_force_unit(suffix);
            if (!u) return {};
            factor = newtons_per(*u);
        } else {
            const auto u = parse_length_unit(suffix);
            if (!u) return {};
            factor = millimetres_per(*u);
        }
    }
    return {ReadingKind::number, number * factor};
}

std::optional<std::uint64_t> read_unsigned(std::string_view field) {
    field = trim(field);
    std::uint64_t v = 0;
    const auto [end, ec] = std::from_chars(field.data(), field.data() + field.size(), v);
    if (ec != std::errc{} || end != field.data() + field.size() || field.empty()) return std::nullopt;
    return v;
}

std::optional<std::uint64_t> read_stamp_us(std::string_view field, double us_per_unit) {
    if (us_per_unit == 1.0) return read_unsigned(field);
    field = trim(field);
    if (field.empty() || !(field.front() >= '0' && field.front() <= '9')) return std::nullopt;  // no sign, no nan
    double v = 0.0;
    const auto [end, ec] = std::from_chars(field.data(), field.data() + field.size(), v, std::chars_format::fixed);
    if (ec != std::errc{} || end != field.data() + field.size()) return std::nullopt;
    const double us = std::round(v * us_per_unit);
    if (!(us < 9.2e18)) return std::nullopt;
    return static_cast<std::uint64_t>(us);
}

}  // namespace tensile::drivers
