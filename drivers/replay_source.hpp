// Replays a byte capture (capture.hpp) as if a device were sending it: with
// its original timing (optionally sped up) or as fast as the loop takes it.
// Arrival times handed on are the capture's own (time_origin_s + record time),
// so a replay gives the same sample times every time. Each record is posted
// separately, so a fast replay never starves the rest of the io_context.
// Errors (missing file, torn tail) are logged and end the replay as finished.
#pragma once

#include <memory>
#include <string>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <spdlog/spdlog.h>

#include "byte_source.hpp"
#include "capture.hpp"

namespace tensile::drivers {

struct ReplaySourceConfig {
    std::string name;
    std::string path;
    bool original_timing = false;
    double speed = 1.0;          // with original timing: 2 = twice as fast
    double time_origin_s = 0.0;  // arrival time of a record at capture time 0
};

class ReplaySource final : public ByteSource, public std::enable_shared_from_this<ReplaySource> {
public:
    static std::shared_ptr<ReplaySource> create(boost::asio::io_context& io, ReplaySourceConfig cfg,
                                                std::shared_ptr<spdlog::logger> log = nullptr);
    void start(SourceHandlers handlers) override;
    void stop() override;
    void send(std::string bytes, SendDone done) override;  // a recording cannot be commanded
    [[nodiscard]] const std::string& name() const override { return cfg_.name; }
    [[nodiscard]] SourceState state() const override { return state_; }

private:
    ReplaySource(boost::asio::io_context& io, ReplaySourceConfig cfg, std::shared_ptr<spdlog::logger> log);
    void step();
    void change(SourceState s, const std::string& detail);

    boost::asio::io_context& io_;
    ReplaySourceConfig cfg_;
    std::shared_ptr<spdlog::logger> log_;
    SourceHandlers handlers_;
    CaptureReader reader_;
    boost::asio::steady_timer timer_;
    std::chrono::steady_clock::time_point started_;
    SourceState state_ = SourceState::stopped;
    std::uint64_t records_ = 0;
};

}  // namespace tensile::drivers
