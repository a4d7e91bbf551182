// The streaming analyzer: frames go in one at a time, events come out the
// moment the frame that makes them known arrives, and finish() gives the final
// results. The same code serves live runs, offline analysis of a recording and
// verification of stored runs, so the three can never disagree.
//
// Error policy: frames without a finite time or force, or going back in time,
// are skipped and counted (a warning in the results); a lost extensometer is an
// event, after which strain comes from the crosshead when there is one. Nothing
// here throws on data.
#pragma once

#include <algorithm>
#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include "break_detector.hpp"
#include "crosshead_strain.hpp"
#include "event.hpp"
#include "frame.hpp"
#include "history.hpp"
#include "modulus_finder.hpp"
#include "profile.hpp"
#include "rate_monitor.hpp"
#include "results.hpp"
#include "specimen.hpp"
#include "yield_detector.hpp"

namespace tensile {

// Stress and strain of the latest frame, for live display and export.
struct PointValues {
    double stress_MPa = absent;
    double strain = absent;            // toe-corrected once E is known
    double true_stress_MPa = absent;   // σ(1+ε)
    double true_strain = absent;       // ln(1+ε)
    bool true_valid = true;            // false past maximum force (deformation no longer uniform)
    StrainSource source = StrainSource::extensometer;
};

class Analyzer {
public:
    Analyzer(SpecimenGeometry geometry, Profile profile);

    // Rows the history keeps before it merges older ones (History::compact):
    // 2^18 rows of 56 bytes, about 15 MB, whatever the length of the run.
    static constexpr std::size_t default_row_limit = std::size_t{1} << 18;

    // Sizes the history for a run of about this many frames (optional).
    void reserve(std::size_t frames) { history_.reserve(std::min(frames, row_limit_)); }

    // A smaller row limit (at least 256), for tests of long runs.
    void limit_rows(std::size_t rows) { row_limit_ = std::max<std::size_t>(rows, 256); }

    // Feeds one frame; appends the events it makes known to `events`.
    void push(const Frame& frame, std::vector<Event>& events);

    // The operator confirmed the extensometer is off (hand-over): strain comes
    // from the crosshead from the next frame on.
    void note_extensometer_removed(std::vector<Event>& events);

    // Final results from everything pushed so far. Can be called more than once.
    [[nodiscard]] Results finish();

    [[nodiscard]] PointValues latest() const;
    [[nodiscard]] bool fractured() const { return breaker_.fracture_index().has_value(); }
    [[nodiscard]] RatePhase phase() const;
    [[nodiscard]] std::optional<double> strain_rate_per_s() const { return rates_.rate_per_s(); }
    [[nodiscard]] const History& history() const { return history_; }
    [[nodiscard]] std::size_t frames_seen() const { return frames_seen_; }

private:
    double effective_extension(const Frame& frame, std::vector<Event>& events);
    void lose_extensometer(const char* why, std::vector<Event>& events);
    void lose_extensometer_from(std::size_t row, const char* why, std::vector<Event>& events);
    bool reading_froze(const Frame& frame);
    void compact_history();
    void note_force_noise(double force_N);
    void follow_modulus(std::size_t i, std::vector<Event>& events);
    void lock_modulus(std::size_t i, std::vector<Event>& events);
    std::optional<ModulusFit> provisional_modulus(std::size_t n);
    void scan_offsets(std::size_t from, std::size_t to, std::vector<Event>& events);
    [[nodiscard]] bool yield_watch_open(std::size_t i) const;
    void follow_yield(std::size_t i, std::vector<Event>& events);
    void follow_max_force(std::size_t i, std::vector<Event>& events);
    void follow_break(std::size_t i, std::vector<Event>& events);
    void follow_rate(std::size_t i, std::vector<Event>& events);

    // SD of force noise: mean |second difference| / (√6·√(2/π)) for white noise.
    [[nodiscard]] double force_noise_N() const { return force_d2_mean_ / (2.449489742783178 * 0.7978845608028654); }
    [[nodiscard]] double toe() const { return modulus_ ? modulus_->toe_strain() : 0.0; }
    [[nodiscard]] double plastic(std::size_t i) const;
    [[nodiscard]] std::size_t force_peak_from() const;
    Event make_event(EventKind kind, std::size_t at, std::size_t known, double value, std::string label) const;
    Event make_event_between(EventKind kind, std::size_t i, double f, std::size_t known, double value,
                             std::string label) const;

    SpecimenGeometry geometry_;
    Profile profile_;
    History history_;
    std::size_t row_limit_ = default_row_limit;
    std::size_t frames_seen_ = 0;
    std::size_t frames_skipped_ = 0;
    std::vector<std::string> warnings_;
    double force_d2_mean_ = 0;
    double last_force_[2] = {};     // the two previous raw forces, for the noise estimate
    std::size_t forces_noted_ = 0;

    // Extensometer and hand-over.
    bool removal_requested_ = false;
    std::optional<std::size_t> lost_at_;
    std::optional<CrossheadModel> crosshead_;
    double last_extension_mm_ = absent;
    double last_crosshead_mm_ = absent;
    // A reading repeated exactly while the crosshead moves under load is a
    // stuck extensometer: the row where the repeats began, and the crosshead there.
    std::optional<std::size_t> same_reading_since_;
    double crosshead_when_stuck_mm_ = absent;
    std::string crosshead_note_;

    // Modulus: provisional until the curve departs from it, then locked.
    std::optional<ModulusFit> modulus_;
    bool modulus_locked_ = false;
    std::size_t next_fit_at_ = 16;
    int departed_frames_ = 0;
    std::vector<double> thin_strain_, thin_stress_, thin_max_;  // reused by provisional_modulus
    std::vector<bool> proof_found_, total_found_;
    bool any_proof_found_ = false;   // some Rp x found: the test is past its elastic phase
    bool all_offsets_found_ = false;
    double yield_watch_plastic_ = 0;  // plastic strain past which no yield point is looked for
    std::vector<OffsetValue> proofs_, totals_;

    YieldDetector yield_;
    BreakDetector breaker_;
    RateMonitor rates_;
    RateCompliance compliance_[rate_phase_count]{};

    std::size_t max_index_ = 0;          // highest force in the range that counts for Fm
    bool max_reported_ = false;
    std::optional<std::size_t> onset_reported_;
};

}  // namespace tensile
