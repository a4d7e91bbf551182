// See time_base.hpp.
#include "time_base.hpp"

#include <algorithm>
#include <cmath>

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
    if (s.stamp_kind == Stamp::counter)
        return cfg_.nominal_rate_hz > 0 ? static_cast<double>(extended_) / cfg_.nominal_rate_hz : 0.0;
    return static_cast<double>(extended_) * 1e-6;
}

void TimeBase::observe(double d, double offset) {
    const auto index = static_cast<std::int64_t>(std::floor(d / cfg_.bucket_s));
    if (buckets_.empty() || index > buckets_.back().index) {
        buckets_.push_back({index, d, offset});
        while (buckets_.size() > cfg_.buckets + 1) buckets_.pop_front();
        refit();  // the previous open bucket just closed
    } else if (offset < buckets_.back().offset) {
        buckets_.back().d = d;
        buckets_.back().offset = offset;
    }
}

void TimeBase::refit() {
    const std::size_t closed = buckets_.size() - 1;
    if (closed < 3) {
        have_fit_ = false;
        return;
    }
    double sd = 0, so = 0;
    for (std::size_t i = 0; i < closed; ++i) {
        sd += buckets_[i].d;
        so += buckets_[i].offset;
    }
    const double md = sd / static_cast<double>(closed), mo = so / static_cast<double>(closed);
    double sdd = 0, sdo = 0;
    for (std::size_t i = 0; i < closed; ++i) {
        const double x = buckets_[i].d - md;
        sdd += x * x;
        sdo += x * (buckets_[i].offset - mo);
    }
    fit_b_ = sdd > 0 ? sdo / sdd : 0.0;
    fit_a_ = mo - fit_b_ * md;
    // Shift down so the line is a lower bound of every closed minimum.
    double worst = 0;
    for (std::size_t i = 0; i < closed; ++i)
        worst = std::max(worst, fit_a_ + fit_b_ * buckets_[i].d - buckets_[i].offset);
    fit_a_ -= worst;
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
