// The embedded demo rig: tensile-sim started as a child process, serving its
// stream over TCP on the real acquisition path, and a queue of specimens from
// our own demo scenario (Harbourline Metals, an invented supplier) armed one
// after the other. The demo also plays the operator: a couple of seconds after
// the daemon asks for the extensometer to come off, it tells the simulator to
// take it off, so the hand-over runs end to end; with `--demo-confirm-by-hand`
// it leaves that to the person at the page (or tensilectl, or a test).
//
// Error policy: a simulator that cannot be started or listed ends the demo
// with a message (start-up); a simulator that dies mid-run is an alarm and the
// queue goes on.
#pragma once

#include <filesystem>
#include <string>
#include <vector>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <spdlog/spdlog.h>

#include "rig_service.hpp"

namespace tensile {

struct DemoSpecimen {
    std::string material;   // simulator preset
    std::string description;
    double S0_mm2 = 0;
    double L0_mm = 0;
};

// Presets listed by the simulator (`tensile-sim --list-materials`). Throws std::runtime_error.
std::vector<DemoSpecimen> list_demo_specimens(const std::filesystem::path& simulator);

// The serial port (a link to the simulator's pty) the demo commands the frame on.
std::filesystem::path demo_control_port(const std::filesystem::path& data_dir);
// The TCP port of the demo config's data source ("frame").
std::uint16_t demo_data_port(const DaemonConfig& config);
// The demo rig's config text: a TCP data source on 127.0.0.1:port and the
// command port above as a serial source of format control.
// `pace`: simulated seconds per real second (the simulator's clock runs at it).
std::string demo_config_text(const std::filesystem::path& data_dir, std::uint16_t sim_port, std::uint16_t monitor_port,
                             double pace = 1.0);

class DemoRig {
public:
    // `runs`: how many specimens to play before stopping the io_context (0: the
    // whole queue, then keep serving). Each run's results go to
    // <data_dir>/demo-run-N.json and the simulator's truth to demo-truth-N.json.
    DemoRig(boost::asio::io_context& io, RigService& rig, std::filesystem::path simulator, std::uint16_t sim_port,
            std::vector<DemoSpecimen> queue, double speed, std::size_t runs, std::filesystem::path data_dir,
            std::shared_ptr<spdlog::logger> log);
    ~DemoRig();

    void start();
    // Fault specs handed to every simulator run (`--fault SPEC`, see simulator/README.md).
    void inject(std::vector<std::string> faults) { faults_ = std::move(faults); }
    // Benchmarks: the simulator writes as fast as the daemon reads, at this sample rate.
    void flat_out(double rate_hz) { fast_rate_hz_ = rate_hz; }
    // The hand-over waits for a person's confirmation instead of the demo's operator.
    void confirm_by_hand(bool by_hand) { by_hand_ = by_hand; }
    // Hooks the service calls (wired by main).
    void on_extensometer_alert();
    void on_run_end(const RunInfo& run, RunState end, const Results& results);
    [[nodiscard]] bool queue_done() const { return next_ >= queue_.size() && child_ <= 0; }

private:
    void play_next();
    void spawn(const DemoSpecimen& s);
    void reap();
    void start_when_tared();

    boost::asio::io_context& io_;
    RigService& rig_;
    std::filesystem::path simulator_;
    std::uint16_t sim_port_;
    std::vector<DemoSpecimen> queue_;
    double speed_;
    std::size_t runs_;
    std::filesystem::path data_dir_;
    std::shared_ptr<spdlog::logger> log_;
    std::vector<std::string> faults_;
    double fast_rate_hz_ = 0;
    bool by_hand_ = false;
    std::size_t next_ = 0;
    int child_ = -1;
    boost::asio::steady_timer operator_, pause_, tare_watch_;
};

}  // namespace tensile
