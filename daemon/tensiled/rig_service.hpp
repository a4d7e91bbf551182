// One rig at work: acquisition feeding the run controller, the controller's
// requests carried out on the rig's outputs (hold / resume / stop commands,
// relay), periodic counters in the log, and observers (storage, monitor,
// demo) told of every step. Everything runs on the daemon's io_context.
//
// Error policy: operator commands return a Result with a message naming the
// state; a request the frame does not acknowledge is logged as an alarm and
// reported to observers, never retried silently beyond the output's policy.
// The software is no interlock: the frame's own limits stay in charge.
#pragma once

#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <spdlog/spdlog.h>

#include "acquisition.hpp"
#include "config/daemon_config.hpp"
#include "daemon/run/run_controller.hpp"
#include "drivers/outputs.hpp"
#include "engine/specimen.hpp"

namespace tensile {

struct RunInfo {
    std::uint64_t number = 0;      // counts runs of this process; storage gives the lasting id
    Specimen specimen;
    SpecimenGeometry geometry{};
    std::string profile;
    double armed_at_s = 0;         // host monotonic
};

// Observers of the rig; any may be empty.
struct RigObservers {
    // Asked before arming (storage ready?); an error refuses the arm with its message.
    std::function<Result<bool>()> may_arm;
    // An error here (the run cannot be stored) takes the arming back.
    std::function<Result<bool>(const RunInfo&)> on_armed;
    std::function<void(const RunInfo&, const RunOutput&)> on_step;     // frames, events, transitions, requests
    std::function<void(const RunInfo&, RunState end, const Results&)> on_run_end;
    std::function<void(const std::string& source, std::span<const std::byte>, double arrival_s)> on_raw;
    std::function<void(const std::string& kind, const std::string& message)> on_alarm;
    std::function<void(const drivers::AlignedFrame&)> on_idle_frame;  // frames while no run is live
};

class RigService {
public:
    RigService(boost::asio::io_context& io, DaemonConfig config, std::shared_ptr<spdlog::logger> log);

    void observe(RigObservers observers) { observers_ = std::move(observers); }
    void start();
    void stop();

    Result<bool> arm(const Specimen& specimen, const std::string& profile);
    Result<bool> start_run();
    Result<bool> stop_run();
    Result<bool> abort_run(const std::string& cause);
    Result<bool> confirm_handover();
    // Takes the tare again (armed, before the start) or the readout zero (no
    // run live); see RunController::retare.
    Result<bool> retare();

    [[nodiscard]] RunState state() const { return controller_.state(); }
    [[nodiscard]] HandoverState handover() const { return controller_.handover(); }
    [[nodiscard]] const RunController& controller() const { return controller_; }
    [[nodiscard]] const std::optional<RunInfo>& run() const { return run_; }
    [[nodiscard]] const DaemonConfig& config() const { return config_; }
    [[nodiscard]] const Acquisition& acquisition() const { return acquisition_; }
    [[nodiscard]] const drivers::AlignedFrame& last_frame() const { return last_frame_; }
    // Reaction time: from reading the bytes that complete a frame to its events
    // emitted and their requests handed to the outputs (host clock, seconds).
    // The last few thousand steps that made events; p50/p99 over them.
    [[nodiscard]] std::pair<double, double> event_latency_p50_p99() const;
    // SIGHUP: takes the profiles of a re-read config. Refused while a run is
    // armed or running; sources and outputs need a restart (said in the result).
    Result<bool> reload(const DaemonConfig& fresh);
    // Sends one command line on the rig's command output (demo operator, tests).
    void send_command(const std::string& command);
    // Every output of the config by name, for operators' commands from the
    // monitor; null when the name is not an output of that kind (or a relay's
    // source is not a serial port).
    [[nodiscard]] std::shared_ptr<drivers::CommandSender> command_output(const std::string& name) const;
    [[nodiscard]] drivers::RelayOutput* relay_output(const std::string& name) const;

private:
    void on_frames(const std::vector<drivers::AlignedFrame>& frames, double arrival_s);
    void note_latency(double latency_s);
    void after_step();
    void carry_out(const Request& request);
    void schedule_tick();
    void schedule_counters();

    boost::asio::io_context& io_;
    DaemonConfig config_;
    std::shared_ptr<spdlog::logger> log_;
    Acquisition acquisition_;
    RunController controller_;
    RunOutput step_;
    std::optional<RunInfo> run_;
    std::uint64_t runs_ = 0;
    RigObservers observers_;
    std::shared_ptr<drivers::CommandSender> commands_;  // the rig's hold/resume/stop output
    drivers::RelayOutput* relay_ = nullptr;            // the rig's hand-over relay
    std::map<std::string, std::shared_ptr<drivers::CommandSender>> senders_;
    std::map<std::string, std::unique_ptr<drivers::RelayOutput>> relays_;
    boost::asio::steady_timer tick_, counters_;
    drivers::AlignedFrame last_frame_{};
    int lost_sources_ = 0;
    std::vector<double> latencies_;   // bounded ring of event-step latencies
    std::size_t latency_next_ = 0;
};

}  // namespace tensile
