// Strain rate over a sliding time window, checked against the profile's band
// for the current phase of the test. Reports leaving and re-entering the band
// (after the new state has lasted half a window, so noise at the edge doesn't
// chatter) and adds up the time inside and outside per phase.
//
// A standstill of the machine is a pause (the frame held, e.g. while the
// extensometer comes off), not a slow test: it is judged over the last tenth
// of the window from the crosshead when there is one (an encoder, free of the
// extensometer's noise), else from the strain, as moving slower than a
// twentieth of the band's lower limit. A pause is neither checked nor
// counted, and the window starts afresh after it, so the ramps into and out
// of a hold are not counted as a slow test either.
#pragma once

#include <cstddef>
#include <optional>

#include "history.hpp"
#include "profile.hpp"
#include "results.hpp"

namespace tensile {

class RateMonitor {
public:
    // `L0_mm` turns crosshead travel into a strain-like rate for the standstill test.
    RateMonitor(const Profile& profile, double L0_mm) : profile_(profile), L0_mm_(L0_mm) {
        // The standstill limit of each band, worked out once rather than on
        // every frame (the same division, so the same value).
        for (int p = 0; p < rate_phase_count; ++p) still_below_[p] = profile.rate_bands[p].min_per_s / 20.0;
    }

    enum class Change { none, left_band, back_in_band };

    Change update(const History& h, std::size_t i, RatePhase phase, RateCompliance (&compliance)[rate_phase_count]);

    // The history merged rows (History::compact): row k is now map(k).
    void on_history_compacted(const RowMap& map) {
        tail_ = map(tail_);
        recent_tail_ = map(recent_tail_);
    }

    [[nodiscard]] std::optional<double> rate_per_s() const { return rate_; }

private:
    [[nodiscard]] bool standing_still(const History& h, std::size_t i, double below_per_s);

    const Profile& profile_;
    double L0_mm_;
    double still_below_[rate_phase_count];  // per phase: slower than this is a standstill
    std::size_t tail_ = 0;          // oldest row inside the window
    std::size_t recent_tail_ = 0;   // oldest row inside the last tenth of the window
    std::optional<double> rate_;
    bool reported_inside_ = true;   // the state last reported
    bool inside_ = true;            // the state now
    double state_since_s_ = 0;
    bool paused_ = false;           // the last judgement was a pause
    bool still_ = false;            // the machine stood still when last judged ...
    double still_judged_s_ = -1e300;  // ... at this time
};

}  // namespace tensile
