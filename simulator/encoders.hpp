// The four wire formats of drivers/wire-formats.md, written into a byte
// buffer: delimited lines, key=value lines, binary frames with CRC-16/CCITT-
// FALSE, and the aligned CSV table. Numbers are printed from integer counts
// with std::to_chars (no locale, no printf) so generation stays fast and
// byte-exact. Cannot fail; an unknown format name is refused by parse_format.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "sample.hpp"

namespace tensile::sim {

enum class Format { lines, keyvalue, binary, table };
std::optional<Format> parse_format(std::string_view name);
const char* name_of(Format format);

// Which channels a stream carries: a bit per ChannelId. A rig may send all
// three on one connection or each on its own (wire-formats.md).
using ChannelSet = unsigned;
inline constexpr ChannelSet channel_bit(ChannelId c) { return 1u << static_cast<unsigned>(c); }
inline constexpr ChannelSet all_channels = 0b111;

class Encoder {
public:
    explicit Encoder(Format format, std::string line_end = "\n", ChannelSet channels = all_channels)
        : format_(format), eol_(std::move(line_end)), channels_(channels) {}

    [[nodiscard]] Format format() const { return format_; }
    // Text formats can carry '#' device messages between records; binary and table cannot.
    [[nodiscard]] bool carries_messages() const { return format_ == Format::lines || format_ == Format::keyvalue; }

    [[nodiscard]] ChannelSet channels() const { return channels_; }

    void begin(std::string& out) const;                    // table header, nothing for the others
    void append(std::string& out, const Sample& s);        // one record of the carried channels
    void message(std::string& out, std::string_view text) const;  // "#ok hold" and the like

private:
    Format format_;
    std::string eol_;
    ChannelSet channels_;
    std::uint16_t seq_ = 0;
};

// Appends a count as a fixed-point decimal with `decimals` digits after the point.
void append_fixed(std::string& out, std::int64_t counts, int decimals);

// One binary frame (exposed for tests of the layout).
void append_binary_frame(std::string& out, std::uint16_t seq, std::uint32_t time_us, const std::int32_t* counts, int n);

}  // namespace tensile::sim
