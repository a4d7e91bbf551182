// Break onset and fracture from force alone. Onset: force falling faster than
// break_rate_per_s·Fmax per second over break_window_s (or, with slow sampling,
// more than half the force lost between two frames). Fracture: force below
// fracture_share of its value at onset. Common practice: fracture shows as a
// force drop of most of the current force within milliseconds.
#pragma once

#include <cstddef>
#include <optional>

#include "history.hpp"
#include "profile.hpp"

namespace tensile {

class BreakDetector {
public:
    explicit BreakDetector(const Profile& profile) : profile_(profile) {}

    enum class Step { none, onset, fracture };

    // `max_force_N`: the highest force so far.
    Step update(const History& h, std::size_t i, double max_force_N);

    // The history merged rows (History::compact): row k is now map(k).
    void on_history_compacted(const RowMap& map) {
        tail_ = map(tail_);
        if (onset_) *onset_ = map(*onset_);
        if (fracture_) *fracture_ = map(*fracture_);
    }

    [[nodiscard]] std::optional<std::size_t> onset_index() const { return onset_; }
    [[nodiscard]] std::optional<std::size_t> fracture_index() const { return fracture_; }

private:
    const Profile& profile_;
    std::size_t tail_ = 0;
    std::optional<std::size_t> onset_;
    std::optional<std::size_t> fracture_;
};

}  // namespace tensile
