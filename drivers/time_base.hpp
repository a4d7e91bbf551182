// Turns a sample's device stamp into host-monotonic seconds.
//
// With a device clock (µs, or a counter at a nominal rate) the device time d is
// mapped onto the host clock as d + offset(d) − latency, where offset(d) is a
// line fitted to the lower envelope of (arrival − d): transport delays only
// ever add to the arrival time, so the smallest offsets are the truest. The
// envelope is kept as the minimum per bucket of device time over a bounded
// window of buckets; a least-squares line through those minima, shifted down
// until no minimum lies below it, follows the device crystal's drift.
// Without a device stamp the time is arrival − latency.
//
// Pure: host times are passed in, so tests drive it with synthetic clocks.
// Never throws; a device clock that jumps backwards (restart) resets the fit
// and is counted.
#pragma once

#include <cstdint>
#include <deque>
#include <span>

#include "sample.hpp"

namespace tensile::drivers {

struct TimeBaseConfig {
    double latency_s = 0.0;        // smallest transport delay of this source (subtracted)
    unsigned clock_bits = 64;      // the device µs clock wraps at 2^clock_bits (binary format: 32)
    double nominal_rate_hz = 0.0;  // for counter stamps
    // Device seconds per host second when a device deliberately runs its clock
    // at another pace (a simulator replaying faster than real time); 1 for
    // every real instrument. The drift fit is for ppm-sized drift only.
    double clock_pace = 1.0;
    double bucket_s = 1.0;         // device-time width of one envelope bucket
    std::size_t buckets = 30;      // buckets kept for the drift fit (bounded window)
};

class TimeBase {
public:
    explicit TimeBase(TimeBaseConfig cfg) : cfg_(cfg) {}

    // Host-monotonic time of the sample; `arrival_s` is when its bytes were read.
    double to_host(const Sample& s, double arrival_s);

    // Stamps time_s of every sample that arrived together.
    void stamp(std::span<Sample> samples, double arrival_s) {
        for (auto& s : samples) s.time_s = to_host(s, arrival_s);
    }

    struct Stats {
        std::uint64_t clock_resets = 0;
        double drift = 0.0;  // fitted d(offset)/d(device time): host seconds per device second − 1
    };
    [[nodiscard]] Stats stats() const { return stats_; }

private:
    struct Bucket {
        std::int64_t index = 0;
        double d = 0.0;  // device time at the minimum
        double offset = 0.0;
        bool partial = false;  // first bucket after a (re)start
    };

    double device_seconds(const Sample& s);
    void observe(double d, double offset);
    void refit();
    void reset();

    TimeBaseConfig cfg_;
    Stats stats_;
    bool have_raw_ = false;
    std::uint64_t last_raw_ = 0;
    std::uint64_t extended_ = 0;  // unwrapped device clock
    std::deque<Bucket> buckets_;  // closed buckets plus the open one at the back
    double fit_a_ = 0.0, fit_b_ = 0.0;
    bool have_fit_ = false;       // line through closed buckets exists
    double last_out_ = -1e300;
};

}  // namespace tensile::drivers
