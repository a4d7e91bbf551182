// Parser for binary frames (`binary` in wire-formats.md), little-endian:
//     A5 5A | L | seq u16 | time u32 µs | n u8 | n × count i32 | CRC-16 (big-endian)
// with L = 7 + 4·n and the CRC-16/CCITT-FALSE over the bytes from L to the last
// count. Error policy (the usual sync-hunting state machine): on any mismatch
// (no sync, L or n not matching the configured channel count, bad CRC) drop ONE
// byte and hunt again, counting it as a resync byte; a real frame that starts
// inside a bad one is therefore never lost. A gap in seq counts lost frames.
// The count INT32_MIN is an overload. Never throws after construction.
#include <cstring>
#include <stdexcept>

#include "crc16.hpp"
#include "parser.hpp"

namespace tensile::drivers {

namespace {

constexpr std::uint8_t sync0 = 0xA5;
constexpr std::uint8_t sync1 = 0x5A;

class BinaryParser final : public Parser {
public:
    explicit BinaryParser(FormatConfig cfg) : Parser(std::move(cfg)) {
        if (config_.channels.empty() || config_.channels.size() > 62)
            throw std::invalid_argument("binary format: give 1 to 62 channels (the length byte holds 7 + 4·n)");
        payload_len_ = 7 + 4 * config_.channels.size();
        frame_len_ = 3 + payload_len_ + 2;
        buf_.reserve(4096 + frame_len_);
    }

    void feed(std::span<const std::byte> bytes, std::vector<Sample>& out) override {
        counters_.stream.bytes += bytes.size();
        const auto* in = reinterpret_cast<const std::uint8_t*>(bytes.data());
        std::size_t used = 0;
        // Work in bounded slices so the buffer never holds more than a slice plus one frame.
        while (used < bytes.size()) {
            const std::size_t take = std::min<std::size_t>(bytes.size() - used, 4096);
            buf_.insert(buf_.end(), in + used, in + used + take);
            used += take;
            scan(out);
        }
    }

    void break_stream() override {
        // What is left always starts with a sync byte: a frame cut short.
        if (!buf_.empty()) discard(buf_.size(), true);
        buf_.clear();
        have_seq_ = false;  // the device may have restarted; do not count a seq jump as loss
    }

private:
    void drop(std::size_t& pos, std::size_t n) {
        pos += n;
        discard(n, false);
    }

    void scan(std::vector<Sample>& out) {
        std::size_t pos = 0;
        const std::size_t size = buf_.size();
        // Each decision is taken as soon as the bytes it needs are present and
        // never depends on how many more happen to be buffered: that is what
        // makes any split of the input give the same result.
        while (pos < size) {
            if (buf_[pos] != sync0) {
                const void* next = std::memchr(buf_.data() + pos, sync0, size - pos);
                const std::size_t at = next ? static_cast<std::size_t>(static_cast<const std::uint8_t*>(next) - buf_.data()) : size;
                drop(pos, at - pos);
                continue;
            }
            if (size - pos < 2) break;
            if (buf_[pos + 1] != sync1) {
                drop(pos, 1);
                continue;
            }
            if (size - pos < 3) break;
            if (buf_[pos + 2] != payload_len_) {
                drop(pos, 1);
                continue;
            }
            if (size - pos < frame_len_) break;
            const std::uint8_t* f = buf_.data() + pos;
            const std::uint16_t want = static_cast<std::uint16_t>((f[frame_len_ - 2] << 8) | f[frame_len_ - 1]);
            if (crc16_ccitt_false({f + 2, 1 + payload_len_}) != want) {
                ++counters_.stream.checksum_failures;
                drop(pos, 1);
                continue;
            }
            if (f[9] != config_.channels.size()) {
                ++counters_.stream.bad_records;  // valid CRC, wrong layout: not our stream's frame
                drop(pos, 1);
                continue;
            }
            take_frame(f, out);
            pos += frame_len_;
        }
        buf_.erase(buf_.begin(), buf_.begin() + static_cast<std::ptrdiff_t>(pos));
    }

    void take_frame(const std::uint8_t* f, std::vector<Sample>& out) {
        const auto seq = static_cast<std::uint16_t>(f[3] | (f[4] << 8));
        const std::uint32_t time_us = static_cast<std::uint32_t>(f[5]) | (static_cast<std::uint32_t>(f[6]) << 8) |
                                      (static_cast<std::uint32_t>(f[7]) << 16) | (static_cast<std::uint32_t>(f[8]) << 24);
        if (have_seq_) {
            const auto gap = static_cast<std::uint16_t>(seq - last_seq_ - 1);
            // A backward jump or repeat (gap in the upper half) is a device restart, not loss.
            if (gap < 0x8000u) counters_.stream.lost_frames += gap;
        }
        have_seq_ = true;
        last_seq_ = seq;
        for (std::size_t c = 0; c < config_.channels.size(); ++c) {
            const std::uint8_t* p = f + 10 + 4 * c;
            const std::uint32_t u = static_cast<std::uint32_t>(p[0]) | (static_cast<std::uint32_t>(p[1]) << 8) |
                                    (static_cast<std::uint32_t>(p[2]) << 16) | (static_cast<std::uint32_t>(p[3]) << 24);
            const auto count = static_cast<std::int32_t>(u);
            Reading r;
            if (u == 0x80000000u) {
                r.kind = ReadingKind::overload;
            } else {
                r.kind = ReadingKind::number;
                r.base = static_cast<double>(count) * base_per_unit(config_.channels[c].unit);
            }
            emit(c, r, Stamp::device_us, time_us, out);
        }
        end_record();
    }

    std::size_t payload_len_ = 0;
    std::size_t frame_len_ = 0;
    std::vector<std::uint8_t> buf_;
    bool have_seq_ = false;
    std::uint16_t last_seq_ = 0;
};

}  // namespace

std::unique_ptr<Parser> make_binary_parser(const FormatConfig& cfg) { return std::make_unique<BinaryParser>(cfg); }

}  // namespace tensile::drivers
