// The common interface of all wire-format parsers: bytes in, samples out.
// No I/O, no clocks, no logging, never throws on the data path. A parser keeps
// at most one record's worth of partial bytes between feed() calls (bounded by
// max_line or the largest frame), so any split of the input gives the same
// samples as feeding it whole.
#pragma once

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <span>
#include <string_view>
#include <vector>

#include "format_config.hpp"
#include "sample.hpp"

namespace tensile::drivers {

enum class ReadingKind : std::uint8_t { number, overload, nan, bad };

// One channel's reading within a record, before calibration.
struct Reading {
    ReadingKind kind = ReadingKind::bad;
    double base = 0.0;  // number in N or mm (text: unit suffix applied; binary: count · unit factor)
};

class Parser {
public:
    using MessageHandler = std::function<void(std::string_view line)>;

    virtual ~Parser() = default;

    // Appends every complete record's samples to `out`.
    virtual void feed(std::span<const std::byte> bytes, std::vector<Sample>& out) = 0;

    // The stream broke (disconnect, port closed): a partial record is counted
    // as bad and dropped so it is never glued to the bytes after the gap.
    virtual void break_stream() = 0;

    void feed(std::string_view text, std::vector<Sample>& out) {
        feed(std::as_bytes(std::span<const char>(text.data(), text.size())), out);
    }

    // `#` lines (acknowledgements, banners) go here instead of being data.
    // Called synchronously from feed(); keep the handler short.
    void on_message(MessageHandler handler) { message_handler_ = std::move(handler); }

    [[nodiscard]] const ParserCounters& counters() const { return counters_; }
    [[nodiscard]] const FormatConfig& config() const { return config_; }

protected:
    explicit Parser(FormatConfig config) : config_(std::move(config)) {
        counters_.channels.resize(config_.channels.size());
    }
    // Calibrates, range-checks and counts one reading; appends a sample unless
    // the reading is a skipped nan. Call end_record() after each accepted record.
    void emit(std::size_t ch, const Reading& r, Stamp kind, std::uint64_t stamp, std::vector<Sample>& out) {
        const ChannelSpec& spec = config_.channels[ch];
        ChannelCounters& c = counters_.channels[ch];
        Sample s;
        s.channel = static_cast<std::uint16_t>(ch);
        s.quantity = quantity_of(spec.unit);
        s.stamp_kind = kind;
        s.stamp = stamp;
        s.flags = resync_pending_ ? flag::resynced : 0;
        switch (r.kind) {
            case ReadingKind::bad: return;  // the caller rejects the record before emitting
            case ReadingKind::nan:
                ++c.nan;
                if (!config_.keep_nan) return;
                s.flags |= flag::nan;
                break;
            case ReadingKind::overload:
                ++c.overload;
                s.flags |= flag::overload;
                break;
            case ReadingKind::number: {
                const double v = r.base * spec.scale + spec.offset;
                if (!std::isfinite(v) || v < spec.min || v > spec.max) {
                    ++c.out_of_range;
                    s.flags |= flag::overload;
                } else {
                    ++c.good;
                    s.value = v;
                }
                break;
            }
        }
        out.push_back(s);
    }
    void end_record() {
        ++counters_.stream.records;
        resync_pending_ = false;
    }
    // Bytes were thrown away; `bad_record` when they formed a whole bad record.
    void discard(std::size_t bytes, bool bad_record) {
        counters_.stream.resync_bytes += bytes;
        if (bad_record) ++counters_.stream.bad_records;
        resync_pending_ = true;
    }

    void deliver_message(std::string_view line) {
        ++counters_.stream.device_messages;
        if (message_handler_) message_handler_(line);
    }

    FormatConfig config_;
    ParserCounters counters_;
    bool resync_pending_ = false;  // next emitted samples carry flag::resynced

private:
    MessageHandler message_handler_;
};

}  // namespace tensile::drivers
