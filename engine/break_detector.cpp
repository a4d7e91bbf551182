// Break onset and fracture; see break_detector.hpp.
#include "break_detector.hpp"

namespace tensile {

BreakDetector::Step BreakDetector::update(const History& h, std::size_t i, double max_force_N) {
    if (fracture_ || i == 0) return Step::none;
    const auto& F = h.force_N;
    if (onset_) {
        if (F[i] < profile_.fracture_share * F[*onset_]) {
            fracture_ = i;
            return Step::fracture;
        }
        // Force came back: it was a slip or a serration, not a break.
        if (F[i] > 0.98 * F[*onset_]) onset_.reset();
        return Step::none;
    }

    const double now = h.time_s[i];
    while (tail_ + 1 < i && now - h.time_s[tail_ + 1] >= profile_.break_window_s) ++tail_;
    const double floor = 0.1 * max_force_N;  // a fall from near zero is not a break
    bool falling = false;
    std::size_t from = tail_;
    const double span = now - h.time_s[tail_];
    // Both tests must hold; the size of the fall is tested first because it
    // needs no division and fails on nearly every frame of a run.
    if (span > 0 && F[tail_] >= floor)
        falling = F[tail_] - F[i] >= 0.5 * profile_.break_rate_per_s * profile_.break_window_s * max_force_N &&
                  (F[tail_] - F[i]) / span > profile_.break_rate_per_s * max_force_N;
    if (!falling && F[i - 1] >= floor && F[i] < 0.5 * F[i - 1]) {
        falling = true;
        from = i - 1;
    }
    if (!falling) return Step::none;

    // The fall began at the highest force of the window.
    std::size_t top = from;
    for (std::size_t k = from; k <= i; ++k)
        if (F[k] > F[top]) top = k;
    onset_ = top;
    if (F[i] < profile_.fracture_share * F[top]) {
        fracture_ = i;
        return Step::fracture;  // onset and fracture in one frame; the caller reports both
    }
    return Step::onset;
}

}  // namespace tensile
