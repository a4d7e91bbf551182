// Line framing and record acceptance shared by the text formats; see
// text_line_parser.hpp for the stamp rules. No I/O, nothing throws.
#include "text_line_parser.hpp"

namespace tensile::drivers {

void TextLineParser::feed(std::span<const std::byte> bytes, std::vector<Sample>& out) {
    counters_.stream.bytes += bytes.size();
    lines_.feed(
        reinterpret_cast<const char*>(bytes.data()), bytes.size(), [&](std::string_view line) { on_line(line, out); },
        [&](std::size_t n) {
            ++counters_.stream.long_lines;
            discard(n, false);
        });
}

void TextLineParser::break_stream() {
    // A partial line is a torn record; the tail of an over-long one was already counted as such.
    if (lines_.pending() > 0) discard(lines_.pending(), !lines_.discarding());
    lines_.clear();
}

bool TextLineParser::carries_on(std::uint64_t from, std::uint64_t to, double steps) const {
    return to >= from && static_cast<double>(to - from) <= steps * step_;
}

void TextLineParser::note_step(std::uint64_t from, std::uint64_t to) {
    if (to <= from) return;
    const double step = static_cast<double>(to - from);
    // A slow mean that learns quickly at first; a lost record (double step)
    // barely moves it. The count saturates, so it never overflows.
    constexpr int memory = 64;
    if (steps_seen_ < memory) {
        ++steps_seen_;
        step_ += (step - step_) / steps_seen_;
    } else {
        step_ += (step - step_) * (1.0 / memory);
    }
}

void TextLineParser::accept(const Record& record, std::vector<Sample>& out) {
    if (record.kind == Stamp::none) {
        if (stamped_) return discard(record.bytes, true);  // a fragment ate the stamp
        return emit_record(record, out);
    }
    stamped_ = true;
    if (held_) {
        Record held = std::move(*held_);
        held_.reset();
        // The next record decides: carrying on from the held one, the device
        // jumped and the held one is taken. Otherwise it is refused: carrying on
        // from the record before it, the held one was glued; carrying on from
        // neither, the next is suspect too (torn records come in bursts), and a
        // stamp nothing confirms is not taken.
        if (carries_on(held.stamp, record.stamp, leap_steps)) {
            emit_record(held, out);
            last_ = held.stamp;
        } else {
            discard(held.bytes, true);
        }
    }
    const bool judged = last_ && steps_seen_ >= steps_to_learn;
    if (judged && !carries_on(*last_, record.stamp, leap_steps)) {
        held_ = record;
        return;
    }
    if (last_) note_step(*last_, record.stamp);
    last_ = record.stamp;
    emit_record(record, out);
}

void TextLineParser::emit_record(const Record& record, std::vector<Sample>& out) {
    const std::size_t n = config_.channels.size();
    for (std::size_t c = 0; c < n; ++c)
        if (record.present[c]) emit(c, record.readings[c], record.kind, record.stamp, out);
    end_record();
}

}  // namespace tensile::drivers
