// Wire format writers; see encoders.hpp.
#include "encoders.hpp"

#include <charconv>
#include <climits>
#include <cstring>

#include "crc16.hpp"

namespace tensile::sim {

std::optional<Format> parse_format(std::string_view n) {
    if (n == "lines") return Format::lines;
    if (n == "keyvalue") return Format::keyvalue;
    if (n == "binary") return Format::binary;
    if (n == "table") return Format::table;
    return std::nullopt;
}

const char* name_of(Format f) {
    switch (f) {
        case Format::lines: return "lines";
        case Format::keyvalue: return "keyvalue";
        case Format::binary: return "binary";
        case Format::table: return "table";
    }
    return "?";
}

namespace {

constexpr std::int64_t pow10(int d) {
    std::int64_t p = 1;
    while (d-- > 0) p *= 10;
    return p;
}

void append_uint(std::string& out, std::uint64_t v) {
    char buf[24];
    const auto r = std::to_chars(buf, buf + sizeof buf, v);
    out.append(buf, r.ptr);
}

// A text reading: the number, or OVER / ---- / nan as wire-formats.md spells them.
void append_reading(std::string& out, const ChannelReading& r, int decimals, std::string_view unit) {
    switch (r.kind) {
        case Reading::value:
            append_fixed(out, r.counts, decimals);
            out += unit;
            return;
        case Reading::over: out += "OVER"; return;
        case Reading::absent: out += "----"; return;
        case Reading::nan: out += "nan"; return;
    }
}

// A table cell: the number, empty when there is no value, nan for NaN.
void append_cell(std::string& out, const ChannelReading& r, int decimals) {
    if (r.kind == Reading::value) append_fixed(out, r.counts, decimals);
    else if (r.kind == Reading::nan) out += "nan";
}

std::int32_t to_count(const ChannelReading& r) {
    if (r.kind != Reading::value || r.counts > INT32_MAX || r.counts <= INT32_MIN) return INT32_MIN;
    return static_cast<std::int32_t>(r.counts);
}

void put_le(std::string& out, std::uint64_t v, int bytes) {
    for (int i = 0; i < bytes; ++i) out.push_back(static_cast<char>((v >> (8 * i)) & 0xFF));
}

}  // namespace

void append_fixed(std::string& out, std::int64_t counts, int decimals) {
    if (counts < 0) {
        out.push_back('-');
        counts = -counts;
    }
    const std::int64_t p = pow10(decimals);
    append_uint(out, static_cast<std::uint64_t>(counts / p));
    if (decimals == 0) return;
    out.push_back('.');
    char frac[20];
    std::int64_t f = counts % p;
    for (int i = decimals - 1; i >= 0; --i) {
        frac[i] = static_cast<char>('0' + f % 10);
        f /= 10;
    }
    out.append(frac, static_cast<std::size_t>(decimals));
}

void append_binary_frame(std::string& out, std::uint16_t seq, std::uint32_t time_us, const std::int32_t* counts, int n) {
    out.push_back(static_cast<char>(0xA5));
    out.push_back(static_cast<char>(0x5A));
    const std::size_t from = out.size();
    out.push_back(static_cast<char>(7 + 4 * n));
    put_le(out, seq, 2);
    put_le(out, time_us, 4);
    out.push_back(static_cast<char>(n));
    for (int i = 0; i < n; ++i) put_le(out, static_cast<std::uint32_t>(counts[i]), 4);
    const auto crc = crc16_ccitt_false(reinterpret_cast<const unsigned char*>(out.data() + from), out.size() - from);
    out.push_back(static_cast<char>(crc >> 8));  // big-endian, as the contract says
    out.push_back(static_cast<char>(crc & 0xFF));
}

void Encoder::begin(std::string& out) const {
    if (format_ == Format::table) {
        out += "time_s,force_N,extension_mm,crosshead_mm";
        out += eol_;
    }
}

void Encoder::append(std::string& out, const Sample& s) {
    const bool f = channels_ & channel_bit(ChannelId::force);
    const bool x = channels_ & channel_bit(ChannelId::extension);
    const bool h = channels_ & channel_bit(ChannelId::crosshead);
    switch (format_) {
        case Format::lines:
            append_uint(out, s.device_time_us);
            if (f) { out.push_back(','); append_reading(out, s.force, force_decimals, " N"); }
            if (x) { out.push_back(','); append_reading(out, s.extension, extension_decimals, " mm"); }
            if (h) { out.push_back(','); append_reading(out, s.crosshead, crosshead_decimals, " mm"); }
            out += eol_;
            return;
        case Format::keyvalue:
            out += "t=";
            append_uint(out, s.device_time_us);
            if (f) { out += " F="; append_reading(out, s.force, force_decimals, ""); }
            if (x) { out += " ext="; append_reading(out, s.extension, extension_decimals, ""); }
            if (h) { out += " xh="; append_reading(out, s.crosshead, crosshead_decimals, ""); }
            out += eol_;
            return;
        case Format::binary: {
            std::int32_t counts[3];
            int n = 0;
            if (f) counts[n++] = to_count(s.force);
            if (x) counts[n++] = to_count(s.extension);
            if (h) counts[n++] = to_count(s.crosshead);
            append_binary_frame(out, seq_++, static_cast<std::uint32_t>(s.device_time_us), counts, n);
            return;
        }
        case Format::table:  // always the aligned frame of all three channels
            append_fixed(out, static_cast<std::int64_t>(s.device_time_us), 6);
            out.push_back(',');
            append_cell(out, s.force, force_decimals);
            out.push_back(',');
            append_cell(out, s.extension, extension_decimals);
            out.push_back(',');
            append_cell(out, s.crosshead, crosshead_decimals);
            out += eol_;
            return;
    }
}

void Encoder::message(std::string& out, std::string_view text) const {
    if (!carries_messages()) return;
    out += text;
    out += eol_;
}

}  // namespace tensile::sim
