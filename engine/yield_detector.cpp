// Upper/lower yield and yield-point extension; see yield_detector.hpp.
//
// ReH: the computer rule for ISO 6892-1 (from memory): a maximum followed by a
// drop of at least yield_drop_pct, with the stress then staying below it for
// yield_drop_strain_pct of strain, before yield_max_plastic_pct of plastic
// strain. Peak and drop are judged on an 8-frame moving average and the drop
// must also exceed four force-noise SDs, so noise on a continuous curve never
// looks like a yield point.
//
// End of yielding: the plateau is followed in strain bins of 0.05 %; work
// hardening has begun once three bins in a row rise more than 1 % above the
// plateau level (the median of the earlier bins). The end of the yield-point
// extension is where the tangent through those bins meets the plateau level,
// the usual graphical construction (ASTM E8 YPE, from memory).
#include "yield_detector.hpp"

#include <algorithm>

#include "least_squares.hpp"

namespace tensile {

namespace {
constexpr double bin_strain = 0.0005;
constexpr std::size_t rising_bins = 3;
constexpr std::size_t min_plateau_bins = 3;
constexpr double hardening_rise = 0.01;
}  // namespace

YieldDetector::Step YieldDetector::update(const History& h, std::size_t i, bool eligible, double plastic,
                                          double noise_MPa) {
    noise_MPa_ = noise_MPa;
    if (!points_) return search_upper(h, i, eligible, plastic, noise_MPa);
    if (!points_->end_index) return follow_plateau(h, i);
    return Step::none;
}

YieldDetector::Step YieldDetector::search_upper(const History& h, std::size_t i, bool eligible, double plastic,
                                                double noise_MPa) {
    // Peaks and drops are judged on a short moving average: the raw maximum of
    // a noisy curve sits several SDs above the curve and would make any later
    // noise dip look like a drop.
    const std::size_t slot = seen_ % smooth_frames;
    if (seen_ >= smooth_frames) smooth_sum_ -= recent_[slot];
    recent_[slot] = h.stress_MPa[i];
    smooth_sum_ += recent_[slot];
    if (++seen_ < smooth_frames) return Step::none;
    const double s = smooth_sum_ / static_cast<double>(smooth_frames);
    if (!eligible) {
        have_peak_ = false;
        return Step::none;
    }
    if (!have_peak_ || s > peak_smoothed_) {
        have_peak_ = true;
        peak_index_ = i;
        peak_smoothed_ = s;
        peak_plastic_ = plastic;
        dropped_ = false;
        return Step::none;
    }
    const double needed = std::max(peak_smoothed_ * profile_.yield_drop_pct / 100.0, 4.0 * noise_MPa);
    if (peak_smoothed_ - s >= needed) dropped_ = true;
    const bool held_below = h.strain[i] - h.strain[peak_index_] >= profile_.yield_drop_strain_pct / 100.0;
    if (!dropped_ || !held_below) return Step::none;
    if (peak_plastic_ >= profile_.yield_max_plastic_pct / 100.0) {
        have_peak_ = false;  // too late to be a yield point; keep watching for a later, real one
        return Step::none;
    }
    // ReH itself is the highest raw stress around the smoothed peak.
    std::size_t top = peak_index_ >= smooth_frames ? peak_index_ + 1 - smooth_frames : 0;
    for (std::size_t k = top; k <= std::min(i, peak_index_ + smooth_frames); ++k)
        if (h.stress_MPa[k] > h.stress_MPa[top]) top = k;
    points_ = YieldPoints{top, h.stress_MPa[top], std::nullopt, std::nullopt, std::nullopt};
    bin_start_ = h.strain[i];
    return Step::upper_confirmed;
}

YieldDetector::Step YieldDetector::follow_plateau(const History& h, std::size_t i) {
    current_.strain_sum += h.strain[i];
    current_.stress_sum += h.stress_MPa[i];
    ++current_.count;
    if (h.strain[i] < bin_start_ + bin_strain) return Step::none;
    bins_.push_back(current_);
    current_ = Bin{};
    bin_start_ = h.strain[i];

    if (bins_.size() < min_plateau_bins + rising_bins) return Step::none;
    const std::size_t k0 = bins_.size() - rising_bins;
    std::vector<double> earlier;
    earlier.reserve(k0);
    for (std::size_t k = 0; k < k0; ++k) earlier.push_back(bins_[k].stress());
    std::nth_element(earlier.begin(), earlier.begin() + static_cast<long>(k0 / 2), earlier.end());
    const double level = earlier[k0 / 2];
    for (std::size_t k = k0; k < bins_.size(); ++k) {
        if (bins_[k].stress() <= level * (1.0 + hardening_rise)) return Step::none;
        if (k > k0 && bins_[k].stress() <= bins_[k - 1].stress()) return Step::none;
    }

    double xs[rising_bins], ys[rising_bins];
    for (std::size_t k = 0; k < rising_bins; ++k) {
        xs[k] = bins_[k0 + k].strain();
        ys[k] = bins_[k0 + k].stress();
    }
    const double reh_strain = h.strain[points_->upper_index];
    double end_strain = xs[0];
    if (auto tangent = fit_line(xs, ys); tangent && tangent->slope > 0)
        end_strain = std::clamp((level - tangent->intercept) / tangent->slope, reh_strain, xs[0]);
    std::size_t end = points_->upper_index;
    while (end < i && h.strain[end] < end_strain) ++end;
    points_->end_index = end;
    points_->Ae = end_strain - reh_strain;
    plateau_ = level;
    settle_lower(h, end);
    return Step::end_confirmed;
}

void YieldDetector::finish(const History& h) {
    if (!points_ || points_->end_index || h.empty()) return;
    std::vector<double> all;
    for (const auto& b : bins_) all.push_back(b.stress());
    if (!all.empty()) {
        std::nth_element(all.begin(), all.begin() + static_cast<long>(all.size() / 2), all.end());
        plateau_ = all[all.size() / 2];
    } else {
        plateau_ = h.stress_MPa.back();
    }
    settle_lower(h, h.size() - 1);
}

// ReL: the lowest stress from the first return to the plateau level after the
// transient dip, up to `last`. Without such a return, the lowest after ReH.
void YieldDetector::settle_lower(const History& h, std::size_t last) {
    const std::size_t first = points_->upper_index + 1;
    if (first > last) return;
    // A dip counts when clearly below the plateau, so noise on the way down
    // from ReH is not mistaken for the return.
    const double dip = plateau_ - std::max(3.0 * noise_MPa_, 0.25 * (points_->ReH_MPa - plateau_));
    std::size_t back = last + 1;
    bool dipped = false;
    for (std::size_t k = first; k <= last; ++k) {
        if (h.stress_MPa[k] < dip) dipped = true;
        else if (dipped && h.stress_MPa[k] >= plateau_) {
            back = k;
            break;
        }
    }
    const std::size_t from = back <= last ? back : first;
    double low = h.stress_MPa[from];
    for (std::size_t k = from; k <= last; ++k) low = std::min(low, h.stress_MPa[k]);
    points_->ReL_MPa = low;
}

}  // namespace tensile
