// Acquisition for one rig: every configured source, its parser and time base,
// and the aligner that merges the channels into frames. Bytes arrive on the
// io_context, become samples, then frames, and are handed on at once; nothing
// here waits. Raw bytes are passed on too, so a run can be re-parsed later.
//
// Error policy: bad bytes are counted by the parsers; a lost link is a gap
// event and the source reconnects by itself; nothing on this path throws.
// Building it (start-up) throws std::runtime_error for a config that passed
// the loader but cannot be built (e.g. a format without a parser).
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <vector>

#include <boost/asio/io_context.hpp>
#include <spdlog/spdlog.h>

#include "config/daemon_config.hpp"
#include "drivers/byte_source.hpp"
#include "frame_pipeline.hpp"

namespace tensile {

struct AcquisitionHandlers {
    // `arrival_s`: host time the bytes that completed these frames were read.
    std::function<void(const std::vector<drivers::AlignedFrame>& frames, double arrival_s)> on_frames;
    std::function<void(const std::string& source, std::span<const std::byte> bytes, double arrival_s)> on_raw;
    std::function<void(const drivers::GapEvent& gap)> on_gap;
    std::function<void(const std::string& source, drivers::SourceState state)> on_state;
};

class Acquisition {
public:
    Acquisition(boost::asio::io_context& io, const DaemonConfig& config, AcquisitionHandlers handlers,
                std::shared_ptr<spdlog::logger> log);
    ~Acquisition();

    void start();
    void stop();
    void reset_time_bases() { pipeline_.reset_time_bases(); }

    [[nodiscard]] std::shared_ptr<drivers::ByteSource> source(const std::string& name) const;
    // Device messages (`#` lines) of a source go here too (command acknowledgements).
    void on_device_message(const std::string& source, std::function<void(std::string_view)> handler);

    struct SourceStatus {
        std::string name;
        drivers::SourceState state;
        drivers::ParserCounters counters;
    };
    [[nodiscard]] std::vector<SourceStatus> status() const;
    [[nodiscard]] std::uint64_t frames_out() const { return frames_out_; }
    void log_counters() const;

private:
    void on_bytes(std::size_t i, std::span<const std::byte> bytes, double arrival_s);

    AcquisitionHandlers handlers_;
    std::shared_ptr<spdlog::logger> log_;
    FramePipeline pipeline_;
    std::vector<std::shared_ptr<drivers::ByteSource>> sources_;  // same order as the pipeline's
    std::vector<drivers::AlignedFrame> ready_;
    std::uint64_t frames_out_ = 0;
};

}  // namespace tensile
