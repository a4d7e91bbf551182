// Aligner against analytic signals: force at 1 kHz as master, extension at
// 500 Hz on an offset grid and crosshead at 100 Hz. Linear signals must come
// out exact; a sine within the linear-interpolation error bound h²·max|f''|/8
// (standard numerical analysis result).
#include <catch2/catch.hpp>

#include <cmath>

#include "drivers/aligner.hpp"
#include "drivers/sample.hpp"

using namespace tensile::drivers;

namespace {

double force_fn(double t) { return 1000.0 + 500.0 * t; }
double ext_lin(double t) { return 0.01 * t; }
constexpr double amp = 0.2, omega = 2 * 3.14159265358979323846 * 3.0;  // 3 Hz
double ext_sin(double t) { return amp * std::sin(omega * t); }
double xh_fn(double t) { return 2.0 - 0.05 * t; }

struct Feed {
    double force_rate = 1000, ext_rate = 500, xh_rate = 100;
    double ext_phase = 0.0007, xh_phase = 0.0003;
    double duration = 2.0;
    double (*ext)(double) = ext_lin;
};

// Pushes the three channels as a live source would: each in its own batches,
// extension arriving later than force. Drains after every batch.
std::vector<AlignedFrame> run(const Feed& f, AlignerConfig cfg, double ext_gap_from = -1, double ext_gap_to = -1,
                              double ext_stop = 1e9) {
    Aligner al(cfg);
    std::vector<AlignedFrame> out;
    std::size_t fi = 0, ei = 0, xi = 0;
    for (double now = 0; now < f.duration + 0.2; now += 0.01) {
        for (; fi / f.force_rate <= now && fi / f.force_rate < f.duration; ++fi) {
            const double t = fi / f.force_rate;
            al.push(Role::force, t, force_fn(t), 0);
        }
        // Extension lags 20 ms behind.
        for (; f.ext_phase + ei / f.ext_rate <= now - 0.02 && f.ext_phase + ei / f.ext_rate < f.duration; ++ei) {
            const double t = f.ext_phase + ei / f.ext_rate;
            if ((t >= ext_gap_from && t < ext_gap_to) || t >= ext_stop) continue;
            al.push(Role::extension, t, f.ext(t), 0);
        }
        for (; f.xh_phase + xi / f.xh_rate <= now && f.xh_phase + xi / f.xh_rate < f.duration; ++xi) {
            const double t = f.xh_phase + xi / f.xh_rate;
            al.push(Role::crosshead, t, xh_fn(t), 0);
        }
        al.drain(out);
    }
    al.flush(out);
    return out;
}

}  // namespace

TEST_CASE("aligner: linear signals at 1 kHz / 500 Hz / 100 Hz come out exact", "[aligner]") {
    AlignerConfig cfg;
    const auto out = run(Feed{}, cfg);
    REQUIRE(out.size() == 2000);
    std::size_t interior = 0;
    for (const auto& a : out) {
        const double t = a.frame.time_s;
        CHECK(a.frame.force_N == force_fn(t));
        if (t < 0.0007 || t < 0.0003) {
            CHECK(a.flags[1] == flag::stale);  // before the first extension reading
            continue;
        }
        if (t > 2.0 - 0.01 + 0.0003) continue;  // after the last crosshead reading: held
        ++interior;
        CHECK(a.frame.extension_mm == Approx(ext_lin(t)).margin(1e-15));
        CHECK(a.frame.crosshead_mm == Approx(xh_fn(t)).margin(1e-13));
        CHECK(a.flags[1] == 0);
        CHECK(a.flags[2] == 0);
    }
    CHECK(interior > 1980);
}

TEST_CASE("aligner: sine within the interpolation error bound", "[aligner]") {
    Feed f;
    f.ext = ext_sin;
    const auto out = run(f, AlignerConfig{});
    const double h = 1.0 / f.ext_rate;
    const double bound = h * h * amp * omega * omega / 8.0;  // h²·max|f''|/8
    double worst = 0;
    for (const auto& a : out)
        if (a.frame.time_s > 0.001 && a.frame.time_s < 1.99)
            worst = std::max(worst, std::abs(a.frame.extension_mm - ext_sin(a.frame.time_s)));
    CHECK(worst <= bound);
    CHECK(worst > bound / 10);  // the check is not vacuous: interpolation really happened
}

TEST_CASE("aligner: a gap in a channel gives stale NaN, not a straight line", "[aligner]") {
    AlignerConfig cfg;
    cfg.max_gap_s = 0.05;
    cfg.stale_after_s = 0.03;
    const auto out = run(Feed{}, cfg, 0.5, 0.7);
    const double before = 0.0007 + 249 / 500.0, after = 0.0007 + 350 / 500.0;  // readings around the gap
    std::size_t nan_in_gap = 0;
    for (const auto& a : out) {
        const double t = a.frame.time_s;
        if (t > before && t < after) {
            // While the gap is open live, the last reading is held (flagged) for stale_after_s, then NaN.
            CHECK(a.flags[1] == flag::stale);
            if (t - before > cfg.stale_after_s) CHECK(std::isnan(a.frame.extension_mm));
            if (std::isnan(a.frame.extension_mm)) ++nan_in_gap;
        } else if (t > 0.01 && t < 1.98) {
            CHECK(a.frame.extension_mm == Approx(ext_lin(t)).margin(1e-15));
            CHECK(a.flags[1] == 0);
        }
    }
    CHECK(nan_in_gap >= 170);
}

TEST_CASE("aligner: a channel that stops is held, then stale", "[aligner]") {
    AlignerConfig cfg;
    cfg.stale_after_s = 0.1;
    cfg.max_wait_s = 0.05;
    const auto out = run(Feed{}, cfg, -1, -1, 1.0);
    REQUIRE(out.size() == 2000);  // the master is never held up by the dead channel
    const double last_t = 0.0007 + 499 / 500.0;  // last extension reading before 1.0 s
    std::size_t held = 0, gone = 0;
    for (const auto& a : out) {
        const double t = a.frame.time_s;
        if (t <= last_t || t < 0.01) continue;
        CHECK(a.flags[1] == flag::stale);
        if (t - last_t <= 0.1) {
            CHECK(a.frame.extension_mm == ext_lin(last_t));
            ++held;
        } else {
            CHECK(std::isnan(a.frame.extension_mm));
            ++gone;
        }
    }
    CHECK(held == 100);
    CHECK(gone > 890);
}

TEST_CASE("aligner: channel names map to frame fields", "[aligner]") {
    CHECK(role_of("force") == Role::force);
    CHECK(role_of("crosshead") == Role::crosshead);
    CHECK_FALSE(role_of("width").has_value());
}

TEST_CASE("aligner: overload on either side gives NaN with the overload flag", "[aligner]") {
    Aligner al(AlignerConfig{.fitted = {true, true, false}});
    std::vector<AlignedFrame> out;
    al.push(Role::extension, 0.0, 1.0, 0);
    al.push(Role::extension, 0.002, tensile::absent, flag::overload);
    al.push(Role::extension, 0.004, 3.0, 0);
    al.push(Role::force, 0.001, 10, 0);
    al.push(Role::force, 0.003, 11, 0);
    al.push(Role::force, 0.004, 12, 0);
    al.drain(out);
    REQUIRE(out.size() == 3);
    CHECK(std::isnan(out[0].frame.extension_mm));
    CHECK(out[0].flags[1] == flag::overload);
    CHECK(out[2].frame.extension_mm == 3.0);
    CHECK(std::isnan(out[2].frame.crosshead_mm));  // not fitted
    CHECK(out[2].flags[2] == 0);
}

TEST_CASE("aligner: waits for a late channel, drops out-of-order readings", "[aligner]") {
    Aligner al(AlignerConfig{.fitted = {true, true, false}, .max_wait_s = 0.05});
    std::vector<AlignedFrame> out;
    al.push(Role::force, 0.010, 1, 0);
    al.push(Role::force, 0.020, 2, 0);
    al.drain(out);
    CHECK(out.empty());  // extension has said nothing yet and 50 ms have not passed
    al.push(Role::extension, 0.000, 0.0, 0);
    al.push(Role::extension, 0.015, 1.5, 0);
    al.push(Role::extension, 0.012, 9.9, 0);  // out of order
    al.drain(out);
    REQUIRE(out.size() == 1);
    CHECK(out[0].frame.extension_mm == Approx(1.0));
    CHECK(al.stats().out_of_order == 1);
    al.push(Role::force, 0.070, 3, 0);  // 50 ms past 0.020: decide it without extension
    al.drain(out);
    REQUIRE(out.size() == 2);
    CHECK(out[1].frame.extension_mm == 1.5);  // held: 5 ms old, flagged
    CHECK(out[1].flags[1] == flag::stale);
}
