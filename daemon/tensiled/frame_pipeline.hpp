// Bytes to frames for one rig, without any I/O: per source a parser and a time
// base, and one aligner merging the channels. The live daemon feeds it what
// its sources read; verification feeds it the raw bytes stored with a run, in
// their original arrival order and times, and so gets the same frames.
//
// Error policy: bad bytes are counted by the parsers; nothing here throws once
// built. Building throws std::runtime_error for a format without a parser.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "config/daemon_config.hpp"
#include "drivers/aligner.hpp"
#include "drivers/parser.hpp"
#include "drivers/time_base.hpp"

namespace tensile {

class FramePipeline {
public:
    explicit FramePipeline(const DaemonConfig& config);

    // Index of a source by name, or -1.
    [[nodiscard]] int source_index(std::string_view name) const;
    [[nodiscard]] std::size_t source_count() const { return streams_.size(); }
    [[nodiscard]] const std::string& source_name(std::size_t i) const { return streams_[i].name; }

    // Feeds bytes of source `i` read at `arrival_s`; appends the frames that
    // became decidable to `out`.
    void feed(std::size_t i, std::span<const std::byte> bytes, double arrival_s,
              std::vector<drivers::AlignedFrame>& out);
    // Every source's clock mapping starts afresh (at arming: devices are often
    // restarted or swapped between specimens, and a run should not inherit a
    // mapping fitted to a clock that is gone).
    void reset_time_bases();
    // The link of source `i` broke: a partial record is dropped.
    void break_stream(std::size_t i) { streams_[i].parser->break_stream(); }
    // `#` lines of source `i` go to `handler` as well.
    void on_message(std::size_t i, std::function<void(std::string_view)> handler);

    [[nodiscard]] const drivers::ParserCounters& counters(std::size_t i) const { return streams_[i].parser->counters(); }

private:
    struct Stream {
        std::string name;
        drivers::TimeBaseConfig time_config;
        std::unique_ptr<drivers::Parser> parser;
        drivers::TimeBase time;
        std::vector<int> roles;  // per parser channel; -1: not framed
        std::vector<drivers::Sample> scratch;
        std::vector<std::function<void(std::string_view)>> message_handlers;
    };
    std::vector<Stream> streams_;
    drivers::Aligner aligner_;
};

}  // namespace tensile
