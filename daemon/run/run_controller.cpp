// Run lifecycle; see run_controller.hpp.
#include "run_controller.hpp"

#include <cmath>

namespace tensile {

const char* name_of(RunState s) {
    switch (s) {
        case RunState::idle: return "idle";
        case RunState::armed: return "armed";
        case RunState::running: return "running";
        case RunState::finished: return "finished";
        case RunState::aborted: return "aborted";
        case RunState::interrupted: return "interrupted";
        case RunState::faulted: return "faulted";
    }
    return "?";
}

const char* name_of(RequestKind k) {
    switch (k) {
        case RequestKind::hold: return "hold";
        case RequestKind::resume: return "resume";
        case RequestKind::stop: return "stop";
        case RequestKind::extensometer_alert: return "extensometer_alert";
        case RequestKind::relay_on: return "relay_on";
        case RequestKind::relay_off: return "relay_off";
    }
    return "?";
}

namespace {
Error refused(const char* what, RunState state, const char* expected) {
    return Error{std::string("cannot ") + what + ": the run is " + name_of(state) + "; expected " + expected};
}
}  // namespace

void RunController::go(RunState to, double now, std::string cause, RunOutput& out) {
    out.transitions.push_back({state_, to, now, std::move(cause)});
    state_ = to;
}

Result<bool> RunController::arm(SpecimenGeometry geometry, RunSettings settings, double now, RunOutput& out) {
    if (live(state_)) return refused("arm", state_, "no run armed or running (finish or abort it first)");
    settings_ = std::move(settings);
    geometry_ = geometry;
    analyzer_.emplace(geometry_, settings_.profile);
    armed_at_ = now;
    tare_from_ = now;
    // The readout zero belonged to the time between runs; this run tares afresh.
    idle_zero_taken_ = false;
    idle_zero_needed_ = idle_zero_seen_ = 0;
    tare_seen_ = 0;
    tare_sum_[0] = tare_sum_[1] = tare_sum_[2] = 0;
    tare_count_[0] = tare_count_[1] = tare_count_[2] = 0;
    handover_ = settings_.handover.when == HandoverRule::When::never ? HandoverState::done : HandoverState::not_due;
    held_ = relay_up_ = saw_upper_yield_ = false;
    fractured_at_.reset();
    lost_since_.reset();
    go(RunState::armed, now, "specimen armed", out);
    return true;
}

Result<bool> RunController::start(double now, RunOutput& out) {
    if (state_ != RunState::armed) return refused("start", state_, "an armed run");
    if (tare_seen_ < settings_.tare_frames) return Error{"cannot start yet: the tare is still being taken; try again in a moment"};
    go(RunState::running, now, "started on command", out);
    return true;
}

Result<bool> RunController::stop(double now, RunOutput& out) {
    if (!live(state_)) return refused("stop", state_, "an armed or running run");
    go(RunState::finished, now, "finished on command", out);
    return true;
}

Result<bool> RunController::abort(double now, std::string cause, RunOutput& out) {
    if (!live(state_)) return refused("abort", state_, "an armed or running run");
    go(RunState::aborted, now, cause.empty() ? "aborted on command" : std::move(cause), out);
    return true;
}

Result<bool> RunController::confirm_handover(double now, RunOutput& out) {
    if (handover_ != HandoverState::waiting)
        return Error{std::string("nothing to confirm: the extensometer hand-over is ") +
                     (handover_ == HandoverState::done ? "done" : "not due yet")};
    finish_handover(now, "confirmed by the operator", out);
    return true;
}

Result<bool> RunController::retare(double now) {
    if (state_ == RunState::running)
        return refused("re-take the tare", state_, "no run live, or an armed run that has not started");
    if (state_ == RunState::armed) {
        tare_from_ = now;
        tare_seen_ = 0;
        tare_sum_[0] = tare_sum_[1] = tare_sum_[2] = 0;
        tare_count_[0] = tare_count_[1] = tare_count_[2] = 0;
        return true;
    }
    idle_zero_from_ = now;
    idle_zero_seen_ = 0;
    idle_zero_needed_ = settings_.tare_frames;
    idle_sum_[0] = idle_sum_[1] = idle_sum_[2] = 0;
    idle_count_[0] = idle_count_[1] = idle_count_[2] = 0;
    return true;
}

void RunController::on_idle_frame(const Frame& raw) {
    if (live(state_) || idle_zero_seen_ >= idle_zero_needed_ || !(raw.time_s >= idle_zero_from_)) return;
    const double v[3] = {raw.force_N, raw.extension_mm, raw.crosshead_mm};
    for (int c = 0; c < 3; ++c)
        if (std::isfinite(v[c])) {
            idle_sum_[c] += v[c];
            ++idle_count_[c];
        }
    if (++idle_zero_seen_ == idle_zero_needed_) {
        for (int c = 0; c < 3; ++c) idle_zero_[c] = idle_count_[c] > 0 ? idle_sum_[c] / idle_count_[c] : 0.0;
        idle_zero_taken_ = true;
    }
}

Frame RunController::idle_view(const Frame& raw) const {
    Frame f = raw;
    if (!idle_zero_taken_) return f;
    f.force_N -= idle_zero_[0];
    f.extension_mm -= idle_zero_[1];
    f.crosshead_mm -= idle_zero_[2];
    return f;
}

void RunController::device_lost(double now) {
    if (!lost_since_) lost_since_ = now;
}
void RunController::device_back(double) { lost_since_.reset(); }

void RunController::on_frame(const Frame& raw, RunOutput& out) {
    if (!live(state_)) return;
    // Frames stamped before arming belong to whatever came before (a previous
    // specimen's tail, a buffer that arrived late): never part of this run.
    if (!(raw.time_s >= armed_at_)) return;
    if (state_ == RunState::armed && tare_seen_ < settings_.tare_frames) {
        if (!(raw.time_s >= tare_from_)) return;  // before a re-take: the old load on the cell
        // Tare: the mean of the first frames after arming, per channel, over
        // the frames where that channel had a value (absent stays absent).
        const double v[3] = {raw.force_N, raw.extension_mm, raw.crosshead_mm};
        for (int c = 0; c < 3; ++c)
            if (std::isfinite(v[c])) {
                tare_sum_[c] += v[c];
                ++tare_count_[c];
            }
        if (++tare_seen_ == settings_.tare_frames)
            for (int c = 0; c < 3; ++c) tare_[c] = tare_count_[c] > 0 ? tare_sum_[c] / tare_count_[c] : 0.0;
        return;
    }
    Frame f;
    f.time_s = raw.time_s - armed_at_;
    f.force_N = raw.force_N - tare_[0];
    f.extension_mm = raw.extension_mm - tare_[1];
    f.crosshead_mm = raw.crosshead_mm - tare_[2];
    if (state_ == RunState::armed) {
        if (!settings_.auto_start || !(f.force_N > settings_.preload_N)) return;
        go(RunState::running, raw.time_s, "force passed the preload", out);
    }

    // The extensometer going silent while its removal is awaited is the
    // confirmation (it was taken off); tell the analyzer before the frame.
    if (handover_ == HandoverState::waiting && !f.has_extension())
        finish_handover(raw.time_s, "extensometer signal stopped", out);

    const std::size_t first_new = out.events.size();
    analyzer_->push(f, out.events);
    out.frames.push_back(f);
    watch_handover(f, first_new, out);

    if (!fractured_at_ && analyzer_->fractured()) {
        fractured_at_ = raw.time_s;
        if (settings_.stop_at_fracture) out.requests.push_back({RequestKind::stop, raw.time_s, "fracture"});
        if (held_ || relay_up_) finish_handover(raw.time_s, "fracture", out);
    }
    tick(raw.time_s, out);
}

void RunController::tick(double now, RunOutput& out) {
    if (!live(state_)) return;
    if (fractured_at_ && now - *fractured_at_ >= settings_.settle_s) {
        go(RunState::finished, now, "fracture", out);
        return;
    }
    if (lost_since_ && now - *lost_since_ > settings_.device_lost_limit_s)
        go(RunState::faulted, now, "a device stayed lost longer than the limit", out);
}

void RunController::watch_handover(const Frame& f, std::size_t first_new, RunOutput& out) {
    if (handover_ != HandoverState::not_due) return;
    const auto& rule = settings_.handover;
    const double now = f.time_s + armed_at_;
    switch (rule.when) {
        case HandoverRule::When::never: return;
        case HandoverRule::When::after_yield: {
            // End of yielding for a yield point; otherwise the largest proof
            // offset asked for, so every Rp comes from the extensometer.
            double largest = 0;
            for (double x : settings_.profile.proof_offsets_pct) largest = std::max(largest, x);
            for (std::size_t k = first_new; k < out.events.size(); ++k) {
                const auto& e = out.events[k];
                if (e.kind == EventKind::upper_yield) saw_upper_yield_ = true;
                if (e.kind == EventKind::yield_end) return begin_handover(now, "yielding ended", out);
                if (e.kind == EventKind::proof_strength && !saw_upper_yield_ && std::abs(e.value - largest) < 1e-9)
                    return begin_handover(now, e.label + " reached", out);
            }
            return;
        }
        case HandoverRule::When::at_strain:
            if (analyzer_->latest().strain >= rule.value) begin_handover(now, "strain reached", out);
            return;
        case HandoverRule::When::at_travel_share:
            if (settings_.profile.extensometer_range_mm > 0 && f.has_extension() &&
                f.extension_mm >= rule.value * settings_.profile.extensometer_range_mm)
                begin_handover(now, "extensometer travel limit near", out);
            return;
    }
}

void RunController::begin_handover(double now, std::string why, RunOutput& out) {
    handover_ = HandoverState::waiting;
    out.requests.push_back({RequestKind::extensometer_alert, now, "remove the extensometer: " + why});
    if (settings_.handover.hold_frame) {
        out.requests.push_back({RequestKind::hold, now, "extensometer removal"});
        held_ = true;
    }
    if (settings_.handover.signal_relay) {
        out.requests.push_back({RequestKind::relay_on, now, "extensometer removal"});
        relay_up_ = true;
    }
}

void RunController::finish_handover(double now, std::string how, RunOutput& out) {
    handover_ = HandoverState::done;
    // At fracture the extensometer is simply done; strain after it means nothing.
    if (analyzer_ && how != "fracture") analyzer_->note_extensometer_removed(out.events);
    if (relay_up_) out.requests.push_back({RequestKind::relay_off, now, how});
    if (held_ && how != "fracture") out.requests.push_back({RequestKind::resume, now, "extensometer off: " + how});
    held_ = relay_up_ = false;
}

std::optional<Results> RunController::results() {
    if (!analyzer_) return std::nullopt;
    return analyzer_->finish();
}

}  // namespace tensile
