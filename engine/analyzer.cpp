// Frame-by-frame part of the analyzer; see analyzer.hpp. Final results are
// worked out in analyzer_finish.cpp.
#include "analyzer.hpp"

#include <algorithm>
#include <cstdio>
#include <cmath>
#include <utility>

namespace tensile {

namespace {
std::string offset_label(const char* symbol, double pct) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%s%g", symbol, pct);
    return buf;
}
// Frames the curve must stay off the provisional modulus line before E locks.
constexpr int departure_frames = 3;
}  // namespace

Analyzer::Analyzer(SpecimenGeometry geometry, Profile profile)
    : geometry_(geometry), profile_(std::move(profile)), yield_(profile_), breaker_(profile_), rates_(profile_, geometry.L0_mm) {
    proof_found_.assign(profile_.proof_offsets_pct.size(), false);
    total_found_.assign(profile_.total_extensions_pct.size(), false);
    for (double x : profile_.proof_offsets_pct) proofs_.push_back({x, std::nullopt});
    for (double x : profile_.total_extensions_pct) totals_.push_back({x, std::nullopt});
    yield_watch_plastic_ = profile_.yield_max_plastic_pct / 100.0;
}

void Analyzer::push(const Frame& frame, std::vector<Event>& events) {
    ++frames_seen_;
    if (fractured()) return;
    if (!std::isfinite(frame.time_s) || !std::isfinite(frame.force_N) ||
        (!history_.empty() && frame.time_s < history_.time_s.back())) {
        ++frames_skipped_;
        return;
    }
    note_force_noise(frame.force_N);
    const double ext = effective_extension(frame, events);
    const double strain = ext / geometry_.L0_mm;
    const double stress = frame.force_N / geometry_.S0_mm2;
    history_.append(frame.time_s, frame.force_N, strain, stress, lost_at_ ? absent : frame.extension_mm,
                    frame.crosshead_mm);
    const std::size_t i = history_.size() - 1;

    if (std::isfinite(strain)) {
        // The tests that end the modulus and yield watches are made here, so
        // the frames long past them (most of a run) skip the calls.
        if (!modulus_locked_ || !all_offsets_found_) follow_modulus(i, events);
        if (yield_watch_open(i)) follow_yield(i, events);
        follow_rate(i, events);
    }
    follow_max_force(i, events);
    follow_break(i, events);
    if (history_.size() >= row_limit_) compact_history();
}

// Force noise from second differences of the raw frames (smooth signals have
// almost none); a slow average so a single step (a yield drop) barely moves it.
void Analyzer::note_force_noise(double force_N) {
    const std::size_t i = forces_noted_++;
    if (i >= 2) {
        const double d2 = std::abs(force_N - 2.0 * last_force_[1] + last_force_[0]);
        const double clipped = i < 64 ? d2 : std::min(d2, 10.0 * force_d2_mean_);
        // The mean's memory grows to 1000 frames; past that a multiply, not a division per frame.
        const double step = clipped - force_d2_mean_;
        force_d2_mean_ += i <= 1001 ? step / static_cast<double>(i - 1) : step * 0.001;
    }
    last_force_[0] = last_force_[1];
    last_force_[1] = force_N;
}

// Older rows merged, the newest quarter of the limit kept frame by frame:
// every row index held anywhere moves to where its row went.
void Analyzer::compact_history() {
    const RowMap map = history_.compact(row_limit_ / 2, row_limit_ / 4);
    auto relocate = [&map](std::size_t& row) { row = map(row); };
    if (lost_at_) relocate(*lost_at_);
    if (modulus_) {
        relocate(modulus_->first);
        relocate(modulus_->last);
    }
    relocate(next_fit_at_);
    relocate(max_index_);
    if (onset_reported_) relocate(*onset_reported_);
    if (same_reading_since_) relocate(*same_reading_since_);
    yield_.on_history_compacted(map);
    breaker_.on_history_compacted(map);
    rates_.on_history_compacted(map);
}

void Analyzer::note_extensometer_removed(std::vector<Event>& events) {
    if (lost_at_) return;
    removal_requested_ = true;
    lose_extensometer("removed by the operator", events);
}

// The extension this frame stands for: the extensometer while it reads sanely,
// then the crosshead through the fitted model.
double Analyzer::effective_extension(const Frame& frame, std::vector<Event>& events) {
    if (!lost_at_) {
        const double ext = frame.extension_mm;
        const char* why = nullptr;
        if (!std::isfinite(ext)) {
            why = history_.empty() ? "no extensometer reading" : "extensometer reading stopped";
        } else if (profile_.extensometer_range_mm > 0 && std::abs(ext) > profile_.extensometer_range_mm) {
            why = "extensometer left its range";
        } else if (std::isfinite(last_extension_mm_) && !history_.empty()) {
            const double dt = frame.time_s - history_.time_s.back();
            const double jump = std::abs(ext - last_extension_mm_);
            // Faster than 5 %/s of L0 on top of the allowed share is no test: slip or removal.
            const double limit = geometry_.L0_mm * (profile_.extensometer_jump_share + 0.05 * std::max(dt, 0.0));
            const double xh_move = std::isfinite(frame.crosshead_mm) && std::isfinite(last_crosshead_mm_)
                                       ? std::abs(frame.crosshead_mm - last_crosshead_mm_)
                                       : 0.0;
            if (jump > limit && jump > 2.0 * xh_move) why = "extensometer reading jumped";
        }
        if (!why && reading_froze(frame)) {
            const std::size_t since = *same_reading_since_;
            warnings_.push_back("extensometer reading froze at " + std::to_string(history_.time_s[since]) +
                                " s: it repeated one value while the crosshead moved under load; strain from "
                                "there on comes from the crosshead");
            lose_extensometer_from(since, "extensometer reading froze", events);
        } else if (!why) {
            last_extension_mm_ = ext;
            if (std::isfinite(frame.crosshead_mm)) last_crosshead_mm_ = frame.crosshead_mm;
            return ext;
        } else {
            lose_extensometer(why, events);
        }
    }
    if (!crosshead_ || !std::isfinite(frame.crosshead_mm)) return absent;
    return crosshead_->extension_mm(frame.crosshead_mm, frame.force_N);
}

// True once the extensometer has repeated one reading exactly for a while
// during which the crosshead moved under load. A working extensometer's last
// digit moves with any strain (and with its own noise), so this is a stuck
// sensor or a channel repeating its last value. The load condition keeps the
// slack at the start, where the specimen is not yet stretched, out of it.
bool Analyzer::reading_froze(const Frame& frame) {
    if (history_.empty() || frame.extension_mm != last_extension_mm_) {
        same_reading_since_.reset();
        return false;
    }
    if (!same_reading_since_) {
        same_reading_since_ = history_.size();  // the row this frame becomes
        crosshead_when_stuck_mm_ = last_crosshead_mm_;
        return false;
    }
    constexpr std::size_t min_repeats = 16;
    if (!modulus_ || history_.size() - *same_reading_since_ < min_repeats) return false;
    const double highest_force = history_.running_max.back() * geometry_.S0_mm2;
    if (!(frame.force_N > 0.1 * highest_force)) return false;
    // 0.1 % of L0 of crosshead travel: tens of counts of any extensometer of
    // ISO 9513 class 1 or better, even with most of the travel in the frame.
    return std::abs(frame.crosshead_mm - crosshead_when_stuck_mm_) > 0.001 * geometry_.L0_mm;
}

void Analyzer::lose_extensometer(const char* why, std::vector<Event>& events) {
    lose_extensometer_from(history_.size(), why, events);
}

// The extensometer is taken as lost from row `row` on (earlier than now when
// its last readings turned out to be stale): rows from there are rewritten
// with the crosshead's strain.
void Analyzer::lose_extensometer_from(std::size_t row, const char* why, std::vector<Event>& events) {
    const std::size_t n = history_.size();
    row = std::min(row, n);
    if (n > 0) row = std::max<std::size_t>(row, 1);
    lost_at_ = row;
    const double fallback_a = geometry_.Lc_mm > 0 ? geometry_.Lc_mm / geometry_.L0_mm : 1.0;
    if (n == 0) {
        // No extensometer from the start: strain from the crosshead alone.
        crosshead_ = CrossheadModel{fallback_a, 0, 0, 0, false};
        warnings_.push_back("no extensometer: strain comes from the crosshead without compliance correction; "
                            "E, Rp and Rt are not valid to ISO 6892-1 or ASTM E8");
        return;
    }
    if (!modulus_locked_ && modulus_) {
        warnings_.push_back(std::string("extensometer lost before the modulus settled (") + why +
                            "); E taken from the data so far");
        lock_modulus(row - 1, events);
    }
    std::size_t first = modulus_ ? std::min(modulus_->first, row) : 0;
    crosshead_ = fit_crosshead_model(history_.extension_mm, history_.crosshead_mm, history_.force_N, first, row,
                                     fallback_a);
    events.push_back(make_event(EventKind::extensometer_lost, row - 1, n - 1, 0, why));
    if (!crosshead_) {
        for (std::size_t k = row; k < n; ++k) history_.extension_mm[k] = history_.strain[k] = absent;
        warnings_.push_back(std::string("extensometer lost at ") + std::to_string(history_.time_s[row - 1]) +
                            " s with no crosshead to carry strain on; strain results after it are missing");
        return;
    }
    // Continuity: the crosshead estimate starts where the extensometer left off.
    for (std::size_t k = row; k-- > first;) {
        if (std::isfinite(history_.extension_mm[k]) && std::isfinite(history_.crosshead_mm[k])) {
            crosshead_->shift_mm =
                history_.extension_mm[k] - crosshead_->extension_mm(history_.crosshead_mm[k], history_.force_N[k]);
            break;
        }
    }
    for (std::size_t k = row; k < n; ++k) {
        history_.extension_mm[k] = absent;
        history_.strain[k] = std::isfinite(history_.crosshead_mm[k])
                                 ? crosshead_->extension_mm(history_.crosshead_mm[k], history_.force_N[k]) /
                                       geometry_.L0_mm
                                 : absent;
    }
    // An offset strength the stuck readings hid may lie in the rewritten rows.
    if (modulus_locked_ && !all_offsets_found_ && row < n) scan_offsets(row, n, events);
    char note[200];
    std::snprintf(note, sizeof note,
                  "strain from %.4g %% on comes from the crosshead (%s, compliance %.3g mm/kN)",
                  100.0 * (history_.strain[row - 1] - toe()), crosshead_->from_fit ? "fitted" : "Lc/L0 ratio",
                  crosshead_->C * 1000.0);
    crosshead_note_ = note;  // reported by finish() unless the loss came with the break
}

double Analyzer::plastic(std::size_t i) const {
    if (!modulus_) return history_.strain[i];
    return history_.strain[i] - toe() - history_.stress_MPa[i] / modulus_->E();
}

void Analyzer::follow_modulus(std::size_t i, std::vector<Event>& events) {
    if (modulus_locked_) {
        if (!all_offsets_found_) scan_offsets(i, i + 1, events);
        return;
    }
    const std::size_t n = i + 1;
    if (n >= next_fit_at_) {
        next_fit_at_ = std::max(n + 16, n + n / 10);
        if (auto fit = provisional_modulus(n)) modulus_ = fit;
    }
    if (!modulus_ || i < modulus_->last) {  // only frames past the fitted part can leave it
        departed_frames_ = 0;
        return;
    }
    const double smallest = profile_.proof_offsets_pct.empty()
                                ? 0.2
                                : *std::min_element(profile_.proof_offsets_pct.begin(), profile_.proof_offsets_pct.end());
    const double threshold = std::max(0.5 * smallest / 100.0, 8.0 * modulus_->residual_sd / modulus_->E());
    departed_frames_ = plastic(i) > threshold ? departed_frames_ + 1 : 0;
    if (departed_frames_ >= departure_frames) lock_modulus(i, events);
}

// The provisional modulus, refitted as the curve grows, only decides when the
// curve has left the straight line; the locked one is fitted on every row. On
// a long elastic part the provisional search runs on every k-th row (no fewer
// than provisional_rows of them), which gives the same line at a fraction of
// the work.
std::optional<ModulusFit> Analyzer::provisional_modulus(std::size_t n) {
    constexpr std::size_t provisional_rows = 4096;
    if (n < 2 * provisional_rows)
        return find_modulus(history_.strain_upto(n), history_.stress_upto(n), history_.max_upto(n), profile_);
    const std::size_t step = n / provisional_rows;
    thin_strain_.clear();
    thin_stress_.clear();
    thin_max_.clear();
    for (std::size_t k = 0; k < n; k += step) {
        thin_strain_.push_back(history_.strain[k]);
        thin_stress_.push_back(history_.stress_MPa[k]);
        thin_max_.push_back(history_.running_max[k]);
    }
    auto fit = find_modulus(thin_strain_, thin_stress_, thin_max_, profile_);
    if (fit) {
        fit->first *= step;
        fit->last = std::min(fit->last * step, n);
    }
    return fit;
}

void Analyzer::lock_modulus(std::size_t i, std::vector<Event>& events) {
    const std::size_t n = i + 1;
    if (auto fit = find_modulus(history_.strain_upto(n), history_.stress_upto(n), history_.max_upto(n), profile_))
        modulus_ = fit;
    if (!modulus_) return;
    modulus_locked_ = true;
    Event e = make_event(EventKind::modulus, modulus_->last - 1, i, modulus_->E(), "E");
    events.push_back(e);
    scan_offsets(modulus_->first + 1, n, events);
}

// Rp x: first frame whose plastic strain reaches x; Rt x: first whose total
// strain does; both interpolated back to the crossing between frames.
void Analyzer::scan_offsets(std::size_t from, std::size_t to, std::vector<Event>& events) {
    const auto& s = history_.strain;
    for (std::size_t k = std::max<std::size_t>(from, 1); k < to; ++k) {
        if (!std::isfinite(s[k]) || !std::isfinite(s[k - 1])) continue;
        for (std::size_t j = 0; j < proofs_.size(); ++j) {
            if (proof_found_[j]) continue;
            const double x = proofs_[j].offset_pct / 100.0;
            const double p0 = plastic(k - 1), p1 = plastic(k);
            if (p1 < x || p0 >= x) continue;
            const double f = (x - p0) / (p1 - p0);
            proof_found_[j] = true;
            any_proof_found_ = true;
            proofs_[j].MPa = between(history_.stress_MPa, k, f);
            events.push_back(make_event_between(EventKind::proof_strength, k, f, history_.size() - 1,
                                                proofs_[j].offset_pct, offset_label("Rp", proofs_[j].offset_pct)));
        }
        for (std::size_t j = 0; j < totals_.size(); ++j) {
            if (total_found_[j]) continue;
            const double x = totals_[j].offset_pct / 100.0 + toe();
            if (s[k] < x || s[k - 1] >= x) continue;
            const double f = (x - s[k - 1]) / (s[k] - s[k - 1]);
            total_found_[j] = true;
            totals_[j].MPa = between(history_.stress_MPa, k, f);
            events.push_back(make_event_between(EventKind::total_extension_strength, k, f, history_.size() - 1,
                                                totals_[j].offset_pct, offset_label("Rt", totals_[j].offset_pct)));
        }
    }
    all_offsets_found_ = std::all_of(proof_found_.begin(), proof_found_.end(), [](bool b) { return b; }) &&
                         std::all_of(total_found_.begin(), total_found_.end(), [](bool b) { return b; });
}

// Past the plastic strain where a yield point may start, with none found,
// or after the end of yielding, there is nothing left to watch.
bool Analyzer::yield_watch_open(std::size_t i) const {
    return !(yield_.points() ? yield_.points()->end_index.has_value()
                             : modulus_locked_ && plastic(i) > yield_watch_plastic_);
}

void Analyzer::follow_yield(std::size_t i, std::vector<Event>& events) {
    const bool eligible = modulus_ && history_.stress_MPa[i] > modulus_->low_MPa;
    switch (yield_.update(history_, i, eligible, plastic(i), force_noise_N() / geometry_.S0_mm2)) {
        case YieldDetector::Step::none: break;
        case YieldDetector::Step::upper_confirmed:
            events.push_back(make_event(EventKind::upper_yield, yield_.points()->upper_index, i,
                                        yield_.points()->ReH_MPa, "ReH"));
            break;
        case YieldDetector::Step::end_confirmed: {
            const auto& y = *yield_.points();
            Event low = make_event(EventKind::lower_yield, *y.end_index, i, *y.ReL_MPa, "ReL");
            low.stress_MPa = *y.ReL_MPa;
            events.push_back(low);
            events.push_back(make_event(EventKind::yield_end, *y.end_index, i, 100.0 * *y.Ae, "Ae"));
            break;
        }
    }
}

// Where the search for Fm starts: after the end of yielding when the material
// yields discontinuously (ISO 6892-1 takes Fm after work hardening begins).
std::size_t Analyzer::force_peak_from() const {
    if (yield_.points() && yield_.points()->end_index) return *yield_.points()->end_index;
    return 0;
}

void Analyzer::follow_max_force(std::size_t i, std::vector<Event>& events) {
    if (yield_.yielding()) return;  // the yield plateau never holds Fm
    const auto& F = history_.force_N;
    max_index_ = std::max(max_index_, force_peak_from());
    if (F[i] > F[max_index_]) {
        max_index_ = i;
        return;
    }
    if (max_reported_ || !std::isfinite(history_.strain[i]) || !std::isfinite(history_.strain[max_index_])) return;
    // Confirmed by both a drop and more strain, so a hold (force relaxing at
    // fixed strain) never counts as the maximum.
    const bool dropped = F[i] < (1.0 - 0.005) * F[max_index_];
    const bool strained = history_.strain[i] > history_.strain[max_index_] + 0.005;
    if (dropped && strained) {
        max_reported_ = true;
        events.push_back(make_event(EventKind::max_force, max_index_, i, F[max_index_], "Fm"));
    }
}

void Analyzer::follow_break(std::size_t i, std::vector<Event>& events) {
    double fmax = 0;
    if (!history_.empty()) fmax = history_.running_max.back() * geometry_.S0_mm2;
    if (!modulus_) return;  // not loaded yet: a wobble near zero is no break
    const auto step = breaker_.update(history_, i, fmax);
    if (step == BreakDetector::Step::none) return;
    if (!max_reported_ && !yield_.yielding()) {
        max_reported_ = true;
        events.push_back(make_event(EventKind::max_force, max_index_, i, history_.force_N[max_index_], "Fm"));
    }
    const std::size_t onset = *breaker_.onset_index();
    if (onset_reported_ != onset) {
        onset_reported_ = onset;
        events.push_back(make_event(EventKind::break_onset, onset, i, history_.force_N[onset], "break"));
    }
    if (step == BreakDetector::Step::fracture)
        events.push_back(make_event(EventKind::fracture, i, i, history_.force_N[i], "fracture"));
}

RatePhase Analyzer::phase() const {
    if (yield_.points()) return yield_.yielding() ? RatePhase::yielding : RatePhase::plastic;
    return any_proof_found_ ? RatePhase::plastic : RatePhase::elastic;
}

void Analyzer::follow_rate(std::size_t i, std::vector<Event>& events) {
    switch (rates_.update(history_, i, phase(), compliance_)) {
        case RateMonitor::Change::none: break;
        case RateMonitor::Change::left_band:
            events.push_back(make_event(EventKind::rate_out_of_range, i, i, *rates_.rate_per_s(), name_of(phase())));
            break;
        case RateMonitor::Change::back_in_band:
            events.push_back(make_event(EventKind::rate_in_range, i, i, *rates_.rate_per_s(), name_of(phase())));
            break;
    }
}

Event Analyzer::make_event(EventKind kind, std::size_t at, std::size_t known, double value, std::string label) const {
    Event e{kind, 0, 0, 0, 0, 0, {}};
    e.time_s = history_.time_s[known];
    e.frame = frames_seen_ - 1;  // the input frame being taken in (rows may stand for several)
    e.stress_MPa = history_.stress_MPa[at];
    e.strain = history_.strain[at] - toe();
    e.value = value;
    e.label = std::move(label);
    return e;
}

Event Analyzer::make_event_between(EventKind kind, std::size_t i, double f, std::size_t known, double value,
                                   std::string label) const {
    Event e = make_event(kind, i, known, value, std::move(label));
    e.stress_MPa = between(history_.stress_MPa, i, f);
    e.strain = between(history_.strain, i, f) - toe();
    return e;
}

PointValues Analyzer::latest() const {
    PointValues p;
    if (history_.empty()) return p;
    const std::size_t i = history_.size() - 1;
    p.stress_MPa = history_.stress_MPa[i];
    p.strain = history_.strain[i] - toe();
    p.true_stress_MPa = p.stress_MPa * (1.0 + p.strain);
    p.true_strain = std::log1p(p.strain);
    p.true_valid = !max_reported_;
    p.source = lost_at_ ? StrainSource::crosshead : StrainSource::extensometer;
    return p;
}

}  // namespace tensile
