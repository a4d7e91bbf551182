// One run on one rig, from arming to its end, as a pure state machine: frames
// and operator commands go in; events, state transitions and requests to the
// frame (hold, resume, stop, extensometer alert, relay) come out. No clocks,
// sockets or threads: the daemon feeds it times and carries out the requests,
// so the same logic is tested here without a frame.
//
//   idle → armed (specimen and settings given; force tared, extension and
//   crosshead zeroed on the first frames) → running (force passes the preload,
//   or on command) → finished (a settle time after fracture, or on command)
//   | aborted (on command) | faulted (a device stayed lost past the limit).
//   The tare can be taken again on command while armed (before the start);
//   between runs the same command takes a zero for the readout only.
//   interrupted is set by storage when the daemon died mid-run.
//
// Requests are requests: the frame's own controller, limits and emergency stop
// stay in charge, and the software is no interlock.
//
// Error policy: commands that don't fit the state are refused with a message
// saying what state the run is in and what was expected; frames never fail.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "engine/analyzer.hpp"
#include "engine/result.hpp"

namespace tensile {

enum class RunState { idle, armed, running, finished, aborted, interrupted, faulted };
const char* name_of(RunState state);
[[nodiscard]] inline bool live(RunState s) { return s == RunState::armed || s == RunState::running; }

// When the extensometer comes off, and what the daemon does about it.
struct HandoverRule {
    enum class When { never, after_yield, at_strain, at_travel_share };
    When when = When::after_yield;  // end of yielding, or the largest proof offset for continuous yielding
    double value = 0;               // strain (fraction) for at_strain; share of travel for at_travel_share
    bool hold_frame = true;         // hold the crosshead while the operator takes it off
    bool signal_relay = false;      // raise the relay output while waiting
};

struct RunSettings {
    Profile profile;
    double preload_N = 20;           // running starts when the tared force passes this
    bool auto_start = true;
    int tare_frames = 16;            // frames averaged for the tare at arming
    double settle_s = 2.0;           // finished this long after fracture
    bool stop_at_fracture = true;
    HandoverRule handover;
    double device_lost_limit_s = 30; // faulted when a device stays lost longer
};

enum class RequestKind { hold, resume, stop, extensometer_alert, relay_on, relay_off };
const char* name_of(RequestKind kind);

struct Request {
    RequestKind kind;
    double time_s;
    std::string why;
};

struct Transition {
    RunState from, to;
    double time_s;
    std::string cause;
};

enum class HandoverState { not_due, waiting, done };

// What one step produced. Cleared by the caller between steps.
struct RunOutput {
    std::vector<Event> events;
    std::vector<Transition> transitions;
    std::vector<Request> requests;
    std::vector<Frame> frames;  // tared frames that belong to the run, times from arming
    void clear() {
        events.clear();
        transitions.clear();
        requests.clear();
        frames.clear();
    }
};

class RunController {
public:
    Result<bool> arm(SpecimenGeometry geometry, RunSettings settings, double now, RunOutput& out);
    Result<bool> start(double now, RunOutput& out);
    Result<bool> stop(double now, RunOutput& out);   // finish on command
    Result<bool> abort(double now, std::string cause, RunOutput& out);
    Result<bool> confirm_handover(double now, RunOutput& out);
    // Takes the tare again from the frames stamped after `now`: while armed
    // (not yet running) it replaces the run's tare; with no run live it takes
    // a zero for the readout between runs (the next arming tares afresh and
    // forgets it).
    // Refused while running: the curve's origin must not move under it.
    Result<bool> retare(double now);
    void on_frame(const Frame& raw, RunOutput& out);
    // Frames while no run is live: feed the readout zero while it is taken.
    void on_idle_frame(const Frame& raw);
    // A frame between runs with the readout zero taken off (as is until one is taken).
    [[nodiscard]] Frame idle_view(const Frame& raw) const;
    [[nodiscard]] bool idle_zero_taken() const { return idle_zero_taken_; }
    [[nodiscard]] const double* idle_zero() const { return idle_zero_; }
    // Time passing without frames: settle after fracture, device-lost limit.
    void tick(double now, RunOutput& out);
    void device_lost(double now);
    void device_back(double now);

    [[nodiscard]] RunState state() const { return state_; }
    [[nodiscard]] HandoverState handover() const { return handover_; }
    [[nodiscard]] const Analyzer* analyzer() const { return analyzer_ ? &*analyzer_ : nullptr; }
    [[nodiscard]] std::optional<Results> results();
    [[nodiscard]] double armed_at() const { return armed_at_; }
    [[nodiscard]] bool tare_taken() const { return state_ == RunState::running || (state_ == RunState::armed && tare_seen_ >= settings_.tare_frames); }
    // Offsets taken at arming (force N, extension mm, crosshead mm); valid once running.
    [[nodiscard]] const double* tare() const { return tare_; }
    // Frames averaged so far for the tare being taken (tare_frames when done).
    [[nodiscard]] int tare_frames_seen() const { return tare_seen_; }
    [[nodiscard]] int tare_frames_needed() const { return settings_.tare_frames; }
    [[nodiscard]] bool idle_zero_pending() const { return idle_zero_seen_ < idle_zero_needed_; }

private:
    void go(RunState to, double now, std::string cause, RunOutput& out);
    void watch_handover(const Frame& tared, std::size_t first_new_event, RunOutput& out);
    void begin_handover(double now, std::string why, RunOutput& out);
    void finish_handover(double now, std::string how, RunOutput& out);

    RunState state_ = RunState::idle;
    RunSettings settings_;
    SpecimenGeometry geometry_{};
    std::optional<Analyzer> analyzer_;
    double armed_at_ = 0;
    // Tare.
    int tare_seen_ = 0;
    double tare_sum_[3] = {0, 0, 0};
    int tare_count_[3] = {0, 0, 0};
    double tare_[3] = {0, 0, 0};
    double tare_from_ = 0;  // frames stamped earlier do not count towards the tare
    // The readout zero between runs.
    int idle_zero_seen_ = 0, idle_zero_needed_ = 0;
    double idle_zero_from_ = 0;
    double idle_sum_[3] = {0, 0, 0};
    int idle_count_[3] = {0, 0, 0};
    double idle_zero_[3] = {0, 0, 0};
    bool idle_zero_taken_ = false;
    // Hand-over and the end.
    HandoverState handover_ = HandoverState::not_due;
    bool held_ = false;
    bool relay_up_ = false;
    bool saw_upper_yield_ = false;
    std::optional<double> fractured_at_;
    std::optional<double> lost_since_;
};

}  // namespace tensile
