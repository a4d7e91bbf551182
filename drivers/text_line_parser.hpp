// The line framing every text format shares: bytes are cut into lines by a
// LineAssembler (LF, CR or CRLF; bounded partial line), an over-long line is
// counted and its bytes discarded, and a broken stream drops its partial line
// as a torn record. A text format only says what one complete line means
// (on_line) and hands each whole record to accept().
//
// accept() also guards the device stamps, because text has no checksum: a
// torn record's fragment glued to the next line can still parse, e.g. the
// fragment "1200" before "12001123,1.6 N,..." reads as a record stamped
// 120012001123 µs. So, once a stream has stamped its records:
//   - a record without a stamp is bad (a fragment ate the time field or key);
//   - a record whose stamp goes back, or leaps more than `leap_steps` typical
//     steps ahead, is held for one record: if the next record carries on
//     from the held one, the device really jumped and both are taken;
//     otherwise the held one is rejected as bad (a glued line; the next one
//     is then judged the same way). A held record waits only for the next
//     line, so a real jump costs one record of latency and nothing else.
// Error policy as Parser: counters, never exceptions on the data path.
#pragma once

#include <array>
#include <optional>

#include "line_assembler.hpp"
#include "parser.hpp"

namespace tensile::drivers {

class TextLineParser : public Parser {
public:
    static constexpr std::size_t max_record_channels = 64;

    void feed(std::span<const std::byte> bytes, std::vector<Sample>& out) final;
    void break_stream() final;

protected:
    explicit TextLineParser(FormatConfig cfg) : Parser(std::move(cfg)), lines_(config_.max_line) {}
    // One complete, non-empty line without its line end.
    virtual void on_line(std::string_view line, std::vector<Sample>& out) = 0;

    // One whole record, as a text format read it.
    struct Record {
        std::array<Reading, max_record_channels> readings;
        std::array<bool, max_record_channels> present{};  // channel c is in this record
        Stamp kind = Stamp::none;
        std::uint64_t stamp = 0;
        std::size_t bytes = 0;  // the line's length, counted as resync bytes if it is rejected
    };
    // Takes a record whose fields all parsed: emits its samples now, holds it
    // for one record, or rejects it (see the stamp rules above).
    void accept(const Record& record, std::vector<Sample>& out);
    // `candidate` reads as a stamp shortly after `stamp` in this stream.
    [[nodiscard]] bool next_stamp_of(std::uint64_t stamp, std::uint64_t candidate) const {
        return steps_seen_ >= steps_to_learn && carries_on(stamp, candidate, leap_steps);
    }

private:
    static constexpr double leap_steps = 8.0;  // a stamp this many typical steps ahead is suspect
    static constexpr int steps_to_learn = 2;   // steps seen before leaps are judged

    void emit_record(const Record& record, std::vector<Sample>& out);
    [[nodiscard]] bool carries_on(std::uint64_t from, std::uint64_t to, double steps) const;
    void note_step(std::uint64_t from, std::uint64_t to);

    LineAssembler lines_;
    bool stamped_ = false;               // the stream has stamped its records
    std::optional<std::uint64_t> last_;  // stamp of the last record taken
    double step_ = 0;                    // typical stamp step (slow mean of steps taken)
    int steps_seen_ = 0;
    std::optional<Record> held_;         // a record whose stamp leapt, waiting for the next
};

}  // namespace tensile::drivers
