// Sliding-window strain rate; see rate_monitor.hpp.
#include "rate_monitor.hpp"

#include <cmath>

namespace tensile {

RateMonitor::Change RateMonitor::update(const History& h, std::size_t i, RatePhase phase,
                                        RateCompliance (&compliance)[rate_phase_count]) {
    const double now = h.time_s[i];
    const double window = profile_.rate_window_s;
    while (tail_ + 1 < i && now - h.time_s[tail_ + 1] >= window) ++tail_;
    const double span = now - h.time_s[tail_];
    if (i == 0 || span < 0.5 * window || !(span > 0)) {
        rate_.reset();
        return Change::none;
    }
    rate_ = (h.strain[i] - h.strain[tail_]) / span;

    const RateBand& band = profile_.rate_bands[static_cast<int>(phase)];
    if (!(band.max_per_s > 0)) return Change::none;
    if (std::abs(*rate_) < band.min_per_s / 20.0) return Change::none;  // paused

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
