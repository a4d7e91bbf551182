// Turns what the rig reports (state changes, frames, events, alarms, the end
// of a run) into live messages for the hub. Frames are thinned to at most one
// `points` message per 20 ms (≤ 50 messages/s): the newest frame with its
// stress and strain, plus the force minimum and maximum over those 20 ms so a
// peak between messages is not lost. Idle frames (no run live) go out as
// `idle` values five times a second. Events, alarms, state and hand-over
// changes go out at once.
//
// Every message is JSON with a "type": hello, state, points, idle, event,
// alarm, handover, run_end. Runs on the io_context thread; the observers call
// it synchronously, so it only appends to bounded queues (via the hub).
//
// Error policy: none of this can fail the rig; a message that cannot be built
// is skipped.
#pragma once

#include <cstdint>
#include <deque>
#include <functional>
#include <optional>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <nlohmann/json.hpp>

#include "daemon/tensiled/rig_service.hpp"
#include "live_hub.hpp"

namespace tensile::monitor {

struct AlarmNote {
    double unix_s;
    std::string kind, message;
    std::optional<std::int64_t> run_id;
};

class LiveFeed {
public:
    static constexpr std::size_t recent_alarms = 20;

    LiveFeed(boost::asio::io_context& io, const RigService& rig, LiveHub& hub);
    void start();
    void stop();

    // Observer hooks, wired by the daemon's main.
    void armed(const RunInfo& run, std::optional<std::int64_t> run_id);
    void step(const RunInfo& run, const RunOutput& out);
    void alarm(const std::string& kind, const std::string& message);
    void run_end(const RunInfo& run, RunState end, const Results& results);
    void idle_frame(const drivers::AlignedFrame& frame);

    // The live values now (tared run frame while a run is live, raw otherwise).
    [[nodiscard]] nlohmann::json values() const;
    [[nodiscard]] const std::deque<AlarmNote>& alarms() const { return alarms_; }
    [[nodiscard]] std::optional<std::int64_t> run_id() const { return run_id_; }
    [[nodiscard]] double frames_per_s() const { return frames_per_s_; }
    [[nodiscard]] std::uint64_t run_frames() const { return run_frames_; }
    // Builds the status document a new client gets first (set by the server).
    std::function<nlohmann::json()> status;

private:
    void send(const nlohmann::json& j);
    void tick_points();
    void schedule_points();
    void tick_second();
    void note_handover();

    boost::asio::io_context& io_;
    const RigService& rig_;
    LiveHub& hub_;
    boost::asio::steady_timer points_timer_, second_timer_;
    bool stopped_ = false;
    std::optional<std::int64_t> run_id_;
    std::uint64_t run_number_ = 0;
    // The 20 ms window.
    std::optional<Frame> latest_;       // newest tared run frame
    std::size_t window_count_ = 0;
    double window_min_ = 0, window_max_ = 0;
    std::optional<drivers::AlignedFrame> idle_;
    int idle_ticks_ = 0;
    HandoverState handover_ = HandoverState::not_due;
    std::deque<AlarmNote> alarms_;
    std::uint64_t run_frames_ = 0, frames_last_second_ = 0;
    double frames_per_s_ = 0;
};

const char* name_of(HandoverState state);

}  // namespace tensile::monitor
