// The line framing every text format shares: bytes are cut into lines by a
// LineAssembler (LF, CR or CRLF; bounded partial line), an over-long line is
// counted and its bytes discarded, and a broken stream drops its partial line
// as a torn record. A text format only says what one complete line means
// (on_line). Error policy as Parser: counters, never exceptions on the data path.
#pragma once

#include "line_assembler.hpp"
#include "parser.hpp"

namespace tensile::drivers {

class TextLineParser : public Parser {
public:
    void feed(std::span<const std::byte> bytes, std::vector<Sample>& out) final {
        counters_.stream.bytes += bytes.size();
        lines_.feed(
            reinterpret_cast<const char*>(bytes.data()), bytes.size(),
            [&](std::string_view line) { on_line(line, out); },
            [&](std::size_t n) {
                ++counters_.stream.long_lines;
                discard(n, false);
            });
    }

    void break_stream() final {
        // A partial line is a torn record; the tail of an over-long one was already counted as such.
        if (lines_.pending() > 0) discard(lines_.pending(), !lines_.discarding());
        lines_.clear();
    }

protected:
    explicit TextLineParser(FormatConfig cfg) : Parser(std::move(cfg)), lines_(config_.max_line) {}
    // One complete, non-empty line without its line end.
    virtual void on_line(std::string_view line, std::vector<Sample>& out) = 0;

private:
    LineAssembler lines_;
};

}  // namespace tensile::drivers
