// Time base: device clocks with drift, jitter and wrap-around mapped onto a
// synthetic host clock. The "truth" is the host instant each reading was taken,
// known here because the test builds the arrival times from it.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <vector>

#include "drivers/time_base.hpp"

using namespace tensile::drivers;

namespace {

Sample stamped(Stamp kind, std::uint64_t raw) {
    Sample s;
    s.stamp_kind = kind;
    s.stamp = raw;
    return s;
}

// A device sampling at `rate` whose crystal runs `drift` fast, seen by a host
// through a link with a fixed latency plus random extra delay, read in chunks.
struct Scenario {
    double rate = 1000;
    double drift = 100e-6;      // 100 ppm, an ordinary crystal tolerance (common practice)
    double device_start_s = 12.0;
    double latency = 0.002;
    double jitter_max = 0.005;
    unsigned clock_bits = 64;
    int chunk = 1;  // readings per read: all of a chunk arrive with its last one
};

double worst_error(const Scenario& sc, double duration, double skip, Stamp kind = Stamp::device_us) {
    TimeBaseConfig cfg;
    cfg.latency_s = sc.latency;
    cfg.clock_bits = sc.clock_bits;
    cfg.nominal_rate_hz = sc.rate;
    TimeBase tb(cfg);
    std::mt19937 rng(7);
    std::uniform_real_distribution<double> jitter(0.0, sc.jitter_max);
    double worst = 0;
    const auto n = static_cast<std::size_t>(duration * sc.rate);
    const std::uint64_t mask = sc.clock_bits >= 64 ? ~std::uint64_t{0} : (std::uint64_t{1} << sc.clock_bits) - 1;
    std::vector<std::pair<std::uint64_t, double>> pending;  // raw stamp, truth
    for (std::size_t k = 0; k < n; ++k) {
        // Reading k is taken at device time start + k/rate; the host instant follows from the drift.
        const double device = sc.device_start_s + static_cast<double>(k) / sc.rate;
        const double truth = 100.0 + static_cast<double>(k) / sc.rate / (1.0 + sc.drift);
        const std::uint64_t raw = kind == Stamp::counter
                                      ? static_cast<std::uint64_t>(std::llround(sc.device_start_s * sc.rate)) + k
                                      : static_cast<std::uint64_t>(std::llround(device * 1e6)) & mask;
        pending.emplace_back(raw, truth);
        if (pending.size() < static_cast<std::size_t>(sc.chunk)) continue;
        const double arrival = truth + sc.latency + jitter(rng);
        for (const auto& [r, tr] : pending) {
            const double t = tb.to_host(stamped(kind, r), arrival);
            if (tr - 100.0 >= skip) worst = std::max(worst, std::abs(t - tr));
        }
        pending.clear();
    }
    CHECK(tb.stats().clock_resets == 0);
    return worst;
}

}  // namespace

TEST_CASE("time base: no stamp means arrival minus latency", "[timebase]") {
    TimeBase tb({.latency_s = 0.004});
    CHECK(tb.to_host(Sample{}, 10.0) == Approx(9.996));
}

TEST_CASE("time base: drifting device clock is tracked within 100 µs", "[timebase]") {
    Scenario sc;
    // Without drift correction the error would reach drift × duration = 6 ms after 60 s.
    CHECK(worst_error(sc, 60.0, 5.0) < 100e-6);
    sc.drift = -250e-6;
    CHECK(worst_error(sc, 60.0, 5.0) < 100e-6);
}

TEST_CASE("time base: readings that arrive in chunks", "[timebase]") {
    // Only the last reading of a chunk arrives promptly; the first bucket is
    // partial and made of late readings. Found by the two-device alignment test.
    Scenario sc;
    sc.rate = 500;
    sc.chunk = 20;
    sc.drift = -150e-6;
    sc.jitter_max = 0.002;
    CHECK(worst_error(sc, 40.0, 5.0) < 200e-6);
}

TEST_CASE("time base: 32-bit µs clock wraps without a jump", "[timebase]") {
    Scenario sc;
    sc.clock_bits = 32;
    sc.device_start_s = 4294.967296 - 20.0;  // wraps 20 s in (2^32 µs)
    CHECK(worst_error(sc, 40.0, 5.0) < 100e-6);
}

TEST_CASE("time base: sample counter at a nominal rate", "[timebase]") {
    Scenario sc;
    sc.rate = 500;
    CHECK(worst_error(sc, 40.0, 5.0, Stamp::counter) < 100e-6);
}

TEST_CASE("time base: device restart resets the fit and is counted", "[timebase]") {
    TimeBase tb({.latency_s = 0.0, .clock_bits = 32});
    double t_before = 0;
    for (int k = 0; k < 5000; ++k) t_before = tb.to_host(stamped(Stamp::device_us, 1000000u + 1000u * k), 50.0 + k * 0.001);
    const double t_after = tb.to_host(stamped(Stamp::device_us, 5), 55.0);
    CHECK(tb.stats().clock_resets == 1);
    CHECK(t_after == Approx(55.0).margin(1e-9));
    CHECK(t_before == Approx(54.999).margin(1e-9));
}

TEST_CASE("time base: output never steps backwards", "[timebase]") {
    TimeBase tb({});
    // The first reading came late; the second shows a lower offset.
    const double a = tb.to_host(stamped(Stamp::device_us, 1000000), 1.010);
    const double b = tb.to_host(stamped(Stamp::device_us, 1001000), 1.001);
    CHECK(a == Approx(1.010));
    CHECK(b >= a);
}
