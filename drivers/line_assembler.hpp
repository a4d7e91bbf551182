// Cuts a byte stream into lines ending in LF, CR or CRLF, for the text formats.
// Holds at most max_line bytes of a partial line between calls; a longer line
// is discarded up to its end and reported once with its length, so a stream
// with no line ends (wrong baud rate, binary on a text port) cannot grow memory.
// Empty lines (the LF of a CRLF among them) are skipped.
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>

namespace tensile::drivers {

class LineAssembler {
public:
    explicit LineAssembler(std::size_t max_line) : max_line_(max_line) { partial_.reserve(max_line); }

    // on_line(std::string_view) for each complete line; on_long(std::size_t) for
    // each discarded over-long line with the number of bytes thrown away.
    template <class OnLine, class OnLong>
    void feed(const char* in, std::size_t n, OnLine&& on_line, OnLong&& on_long) {
        std::size_t i = 0;
        while (i < n) {
            const std::size_t end = find_eol(in, i, n);
            const std::size_t len = end - i;
            const bool complete = end < n;
            if (discarding_) {
                discarded_ += len;
                if (!complete) return;
                on_long(discarded_);
                discarding_ = false;
                discarded_ = 0;
            } else if (!complete) {
                if (partial_.size() + len > max_line_) {
                    discarding_ = true;
                    discarded_ = partial_.size() + len;
                    partial_.clear();
                } else {
                    partial_.append(in + i, len);
                }
                return;
            } else if (partial_.empty()) {
                // Fast path: the whole line is in this chunk, no copy.
                if (len > max_line_) on_long(len);
                else if (len > 0) on_line(std::string_view(in + i, len));
            } else {
                if (partial_.size() + len > max_line_) {
                    on_long(partial_.size() + len);
                } else {
                    partial_.append(in + i, len);
                    on_line(std::string_view(partial_));
                }
                partial_.clear();
            }
            i = end + 1;
        }
    }

    // Bytes held for an unfinished line (including a line being discarded).
    [[nodiscard]] std::size_t pending() const { return discarding_ ? discarded_ : partial_.size(); }
    [[nodiscard]] bool discarding() const { return discarding_; }

    void clear() {
        partial_.clear();
        discarding_ = false;
        discarded_ = 0;
    }

private:
    // Scan for either line end eight bytes at a time (the classic "has a zero
    // byte" word trick), then byte by byte: lines are short, so this beats
    // two library memchr calls per line.
    static std::size_t find_eol(const char* in, std::size_t from, std::size_t n) {
        constexpr std::uint64_t ones = 0x0101010101010101ull, highs = 0x8080808080808080ull;
        std::size_t i = from;
        for (; i + 8 <= n; i += 8) {
            std::uint64_t w;
            std::memcpy(&w, in + i, 8);
            const std::uint64_t lf = w ^ (ones * '\n'), cr = w ^ (ones * '\r');
            if (((lf - ones) & ~lf & highs) | ((cr - ones) & ~cr & highs)) break;
        }
        for (; i < n; ++i)
            if (in[i] == '\n' || in[i] == '\r') return i;
        return n;
    }

    std::size_t max_line_;
    std::string partial_;
    bool discarding_ = false;
    std::size_t discarded_ = 0;
};

}  // namespace tensile::drivers
