// Strain rate over a sliding time window, checked against the profile's band
// for the current phase of the test. Reports leaving and re-entering the band
// (after the new state has lasted half a window, so noise at the edge doesn't
// chatter) and adds up the time inside and outside per phase. A rate below a
// twentieth of the band's lower limit counts as a pause (the frame held, e.g.
// for removing the extensometer): not checked and not counted.
#pragma once

#include <cstddef>
#include <optional>

#include "history.hpp"
#include "profile.hpp"
#include "results.hpp"

namespace tensile {

class RateMonitor {
public:
    explicit RateMonitor(const Profile& profile) : profile_(profile) {}

    enum class Change { none, left_band, back_in_band };

    Change update(const History& h, std::size_t i, RatePhase phase, RateCompliance (&compliance)[rate_phase_count]);

    // The history merged rows (History::compact): row k is now map(k).
    void on_history_compacted(const RowMap& map) { tail_ = map(tail_); }

    [[nodiscard]] std::optional<double> rate_per_s() const { return rate_; }

private:
    const Profile& profile_;
    std::size_t tail_ = 0;          // oldest row inside the window
    std::optional<double> rate_;
    bool reported_inside_ = true;   // the state last reported
    bool inside_ = true;            // the state now
    double state_since_s_ = 0;
};

}  // namespace tensile
