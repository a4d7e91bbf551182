// See time_base.hpp.
#include "time_base.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

namespace tensile::drivers {

void TimeBase::reset() {
    buckets_.clear();
    have_fit_ = false;
    last_out_ = -1e300;
}

double TimeBase::device_seconds(const Sample& s) {
    const std::uint64_t raw = s.stamp;
    if (!have_raw_) {
        have_raw_ = true;
        extended_ = raw;
    } else if (cfg_.clock_bits < 64) {
        const std::uint64_t mask = (std::uint64_t{1} << cfg_.clock_bits) - 1;
        const std::uint64_t delta = (raw - last_raw_) & mask;
        if (delta < (std::uint64_t{1} << (cfg_.clock_bits - 1))) {
            extended_ += delta;
        } else {  // a step back: the device restarted
            ++stats_.clock_resets;
            reset();
            extended_ = raw;
        }
    } else if (raw >= last_raw_) {
        extended_ = raw;
    } else {
        ++stats_.clock_resets;
        reset();
        extended_ = raw;
    }
    last_raw_ = raw;
    const double pace = cfg_.clock_pace > 0 ? cfg_.clock_pace : 1.0;
    if (s.stamp_kind == Stamp::counter)
        return cfg_.nominal_rate_hz > 0 ? static_cast<double>(extended_) / cfg_.nominal_rate_hz / pace : 0.0;
    return static_cast<double>(extended_) * 1e-6 / pace;
}

void TimeBase::observe(double d, double offset) {
    const auto index = static_cast<std::int64_t>(std::floor(d / cfg_.bucket_s));
    if (buckets_.empty() || index > buckets_.back().index) {
        buckets_.push_back({index, d, offset, buckets_.empty()});
        while (buckets_.size() > cfg_.buckets + 1) buckets_.pop_front();
        refit();  // the previous open bucket just closed
    } else if (offset < buckets_.back().offset) {
        buckets_.back().d = d;
        buckets_.back().offset = offset;
    }
}

void TimeBase::refit() {
    // Closed buckets only; the first bucket after a (re)start covers part of a
    // bucket and mostly readings that waited in the same read as later ones, so
    // its minimum is too high: leave it out.
    std::vector<const Bucket*> pts;
    for (std::size_t i = 0; i + 1 < buckets_.size(); ++i)
        if (!buckets_[i].partial) pts.push_back(&buckets_[i]);
    if (pts.size() < 3) {
        have_fit_ = false;
        return;
    }
    // Theil–Sen slope (median of pairwise slopes): one bucket whose minimum
    // was spoiled by a long delay cannot tilt the line.
    std::vector<double> slopes;
    slopes.reserve(pts.size() * (pts.size() - 1) / 2);
    for (std::size_t i = 0; i < pts.size(); ++i)
        for (std::size_t j = i + 1; j < pts.size(); ++j)
            if (pts[j]->d != pts[i]->d) slopes.push_back((pts[j]->offset - pts[i]->offset) / (pts[j]->d - pts[i]->d));
    if (slopes.empty()) {
        have_fit_ = false;
        return;
    }
    std::nth_element(slopes.begin(), slopes.begin() + static_cast<std::ptrdiff_t>(slopes.size() / 2), slopes.end());
    fit_b_ = slopes[slopes.size() / 2];
    // Through the lowest minimum: delays only ever add, so the lowest is the truest.
    fit_a_ = pts.front()->offset - fit_b_ * pts.front()->d;
    for (const Bucket* b : pts) fit_a_ = std::min(fit_a_, b->offset - fit_b_ * b->d);
    have_fit_ = true;
    stats_.drift = fit_b_;
}

double TimeBase::to_host(const Sample& s, double arrival_s) {
    if (s.stamp_kind == Stamp::none) return arrival_s - cfg_.latency_s;
    const double d = device_seconds(s);
    observe(d, arrival_s - d);
    double offset;
    const Bucket& open = buckets_.back();
    if (have_fit_) {
        offset = fit_a_ + fit_b_ * d;
        // The open bucket may already show a lower offset than the line predicts.
        const double open_line = fit_a_ + fit_b_ * open.d;
        if (open.offset < open_line) offset -= open_line - open.offset;
    } else {
        offset = open.offset;
        for (const auto& b : buckets_) offset = std::min(offset, b.offset);
    }
    // Never step backwards: a better envelope found later would otherwise
    // reorder samples already handed on.
    const double t = std::max(d + offset - cfg_.latency_s, last_out_);
    last_out_ = t;
    return t;
}

}  // namespace tensile::drivers
