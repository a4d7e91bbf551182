// Sliding-window strain rate; see rate_monitor.hpp.
#include "rate_monitor.hpp"

#include <cmath>

namespace tensile {

namespace {

// Moves `tail` forward so rows [tail, i] span at most `window` seconds.
void follow(const History& h, std::size_t i, double window, std::size_t& tail) {
    const double now = h.time_s[i];
    while (tail + 1 < i && now - h.time_s[tail + 1] >= window) ++tail;
}

}  // namespace

// Judged afresh every fiftieth of the window only: a pause found a few
// milliseconds late changes nothing, and this ran on every row of a long
// recording.
bool RateMonitor::standing_still(const History& h, std::size_t i, double below_per_s) {
    const double now = h.time_s[i];
    if (now >= still_judged_s_ && now - still_judged_s_ < 0.02 * profile_.rate_window_s) return still_;
    still_judged_s_ = now;
    const double span = now - h.time_s[recent_tail_];
    const double xh_now = h.crosshead_mm[i], xh_then = h.crosshead_mm[recent_tail_];
    const double moved = std::isfinite(xh_now) && std::isfinite(xh_then) && L0_mm_ > 0
                             ? (xh_now - xh_then) / L0_mm_
                             : h.strain[i] - h.strain[recent_tail_];
    still_ = span > 0 && std::abs(moved) < below_per_s * span;
    return still_;
}

RateMonitor::Change RateMonitor::update(const History& h, std::size_t i, RatePhase phase,
                                        RateCompliance (&compliance)[rate_phase_count]) {
    const double now = h.time_s[i];
    const double window = profile_.rate_window_s;
    follow(h, i, window, tail_);
    follow(h, i, 0.1 * window, recent_tail_);
    const RateBand& band = profile_.rate_bands[static_cast<int>(phase)];
    const double still_below = still_below_[static_cast<int>(phase)];
    const bool banded = band.max_per_s > 0;
    auto pause = [&] {
        paused_ = true;
        tail_ = i;                   // the window starts again when the machine moves
        inside_ = reported_inside_;  // and a change not yet reported is forgotten
        rate_.reset();
        return Change::none;
    };
    const double span = now - h.time_s[tail_];
    if (i == 0 || span < 0.5 * window || !(span > 0)) {
        // While paused the window keeps restarting; it grows again once the
        // machine moves.
        if (i > 0 && banded && paused_ && standing_still(h, i, still_below)) return pause();
        rate_.reset();
        return Change::none;
    }
    rate_ = (h.strain[i] - h.strain[tail_]) / span;
    paused_ = false;
    if (!banded) return Change::none;
    // A standstill only matters once the rate has fallen below the band (the
    // ramp into a hold); until then the time is rightly counted inside.
    if (std::abs(*rate_) < still_below ||
        (*rate_ < band.min_per_s && standing_still(h, i, still_below)))
        return pause();

    const double dt = now - h.time_s[i - 1];
    const bool inside = *rate_ >= band.min_per_s && *rate_ <= band.max_per_s;
    auto& c = compliance[static_cast<int>(phase)];
    if (dt > 0 && dt < window) {
        c.seconds_checked += dt;
        if (inside) c.seconds_inside += dt;
    }
    if (inside != inside_) {
        inside_ = inside;
        state_since_s_ = now;
    }
    if (inside_ != reported_inside_ && now - state_since_s_ >= 0.5 * window) {
        reported_inside_ = inside_;
        return inside_ ? Change::back_in_band : Change::left_band;
    }
    return Change::none;
}

}  // namespace tensile
