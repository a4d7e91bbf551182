// Discontinuous yielding, followed frame by frame: the upper yield ReH (a
// maximum followed by a real drop), the lower yield ReL (the lowest stress of
// the yield plateau, the initial transient ignored) and the yield-point
// extension Ae (from ReH to the start of work hardening). Reads the analyzer's
// history; never allocates per frame beyond its strain bins.
#pragma once

#include <cstddef>
#include <optional>
#include <vector>

#include "history.hpp"
#include "profile.hpp"

namespace tensile {

struct YieldPoints {
    std::size_t upper_index = 0;          // frame of ReH
    double ReH_MPa = 0;
    std::optional<double> ReL_MPa;        // known at the end of yielding (or at finish)
    std::optional<double> Ae;             // strain, fraction
    std::optional<std::size_t> end_index; // frame near the start of work hardening
};

class YieldDetector {
public:
    explicit YieldDetector(const Profile& profile) : profile_(profile) {}

    enum class Step { none, upper_confirmed, end_confirmed };

    // Row `i` of `history` was just added. `eligible`: the stress is above the
    // start of the linear part (so grip seating in the toe can't count);
    // `plastic`: the current plastic strain estimate; `noise_MPa`: stress noise SD.
    Step update(const History& history, std::size_t i, bool eligible, double plastic, double noise_MPa);

    // At the end of a run still yielding: ReL from what was seen, Ae unknown.
    void finish(const History& history);

    // The history merged rows (History::compact): row k is now map(k).
    void on_history_compacted(const RowMap& map) {
        peak_index_ = map(peak_index_);
        if (!points_) return;
        points_->upper_index = map(points_->upper_index);
        if (points_->end_index) *points_->end_index = map(*points_->end_index);
    }

    [[nodiscard]] const std::optional<YieldPoints>& points() const { return points_; }
    [[nodiscard]] bool yielding() const { return points_ && !points_->end_index; }

private:
    struct Bin {
        double strain_sum = 0, stress_sum = 0;
        std::size_t count = 0;
        [[nodiscard]] double strain() const { return strain_sum / static_cast<double>(count); }
        [[nodiscard]] double stress() const { return stress_sum / static_cast<double>(count); }
    };

    Step search_upper(const History& h, std::size_t i, bool eligible, double plastic, double noise_MPa);
    Step follow_plateau(const History& h, std::size_t i);
    void settle_lower(const History& h, std::size_t last);

    const Profile& profile_;
    // Searching for ReH.
    bool have_peak_ = false;
    std::size_t peak_index_ = 0;
    double peak_plastic_ = 0;
    bool dropped_ = false;
    double peak_smoothed_ = 0;
    static constexpr std::size_t smooth_frames = 8;
    double recent_[smooth_frames] = {};
    std::size_t seen_ = 0;
    double smooth_sum_ = 0;
    // Following the plateau.
    std::optional<YieldPoints> points_;
    double noise_MPa_ = 0;
    double plateau_ = 0;               // plateau level (median of bin means)
    Bin current_;
    double bin_start_ = 0;
    std::vector<Bin> bins_;
};

}  // namespace tensile
