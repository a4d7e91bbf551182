// The run lifecycle without a frame: arming and tare, automatic start at the
// preload, the extensometer hand-over (alert, hold, confirmation, resume), stop
// at fracture, the settle time, refusals and the device-lost limit.
#include <catch2/catch.hpp>

#include <algorithm>

#include "curve_maker.hpp"
#include "daemon/run/run_controller.hpp"

using namespace tensile;
using namespace tensile::testing;

namespace {

std::vector<RequestKind> kinds(const std::vector<Request>& requests) {
    std::vector<RequestKind> k;
    for (const auto& r : requests) k.push_back(r.kind);
    return k;
}

// The rig's view: frames offset by a tare, starting with some idle frames.
std::vector<Frame> rig_frames(const std::vector<Frame>& run, double force_zero, double ext_zero) {
    std::vector<Frame> out;
    for (int i = 0; i < 50; ++i) out.push_back({0.001 * i, force_zero, ext_zero, 0.0});
    for (auto f : run) {
        f.time_s += 0.05;
        f.force_N += force_zero;
        f.extension_mm += ext_zero;
        out.push_back(f);
    }
    return out;
}

struct Played {
    RunOutput all;
    RunController controller;
};

void play(RunController& c, const std::vector<Frame>& frames, RunOutput& all) {
    RunOutput step;
    for (const auto& f : frames) {
        step.clear();
        c.on_frame(f, step);
        all.events.insert(all.events.end(), step.events.begin(), step.events.end());
        all.transitions.insert(all.transitions.end(), step.transitions.begin(), step.transitions.end());
        all.requests.insert(all.requests.end(), step.requests.begin(), step.requests.end());
        all.frames.insert(all.frames.end(), step.frames.begin(), step.frames.end());
    }
}

RigSettings handover_rig() {
    RigSettings rig;
    rig.compliance_mm_per_N = 2e-5;
    rig.remove_extensometer_at = 0.008;  // the operator takes it off at 0.8 %
    rig.hold_s = 5;
    rig.fracture_strain = 0.12;
    return rig;
}

}  // namespace

TEST_CASE("a run arms, tares, starts at the preload, hands over and stops at fracture") {
    const auto rig = handover_rig();
    const auto frames = rig_frames(make_run(hill_curve(68900, 276, 14), rig), 35.0, 0.25);
    RunController c;
    RunOutput all;
    RunSettings settings;
    settings.preload_N = 20;
    REQUIRE(c.arm({rig.S0_mm2, rig.L0_mm, rig.Lc_mm}, settings, 0.0, all));
    play(c, frames, all);

    // Tare: the recorded frames start from zero force and zero extension.
    REQUIRE_FALSE(all.frames.empty());
    CHECK(all.frames.front().force_N == Approx(20).margin(5));
    CHECK(all.frames.front().extension_mm < 0.01);

    // Hand-over: after Rp0.2, alert and hold; the extensometer going silent
    // confirms it; then resume. At fracture: stop.
    const auto k = kinds(all.requests);
    const std::vector<RequestKind> expected{RequestKind::extensometer_alert, RequestKind::hold, RequestKind::resume,
                                            RequestKind::stop};
    CHECK(k == expected);
    CHECK(c.handover() == HandoverState::done);
    CHECK(c.state() == RunState::running);  // still settling after fracture

    RunOutput later;
    c.tick(frames.back().time_s + 3.0, later);
    CHECK(c.state() == RunState::finished);
    REQUIRE(later.transitions.size() == 1);
    CHECK(later.transitions[0].cause == "fracture");

    const auto results = c.results();
    REQUIRE(results);
    REQUIRE(results->proof(0.2));
    CHECK(*results->proof(0.2) == Approx(276).epsilon(0.01));  // Hill-1944 (derived), from the extensometer
    CHECK(results->At_source == StrainSource::crosshead);
    CHECK(*results->At_pct == Approx(12.0).margin(0.5));
}

TEST_CASE("a yield-point steel is handed over at the end of yielding, not at Rp0.2") {
    RigSettings rig;
    rig.compliance_mm_per_N = 2e-5;
    rig.switch_strain = 0.004;
    rig.plastic_rate_per_s = 0.002;
    rig.end_strain = 0.05;
    const auto frames = rig_frames(make_run(yield_point_curve(210000, 380, 362, 0.018, 900, 0.5), rig), 0, 0);
    RunController c;
    RunOutput all;
    REQUIRE(c.arm({rig.S0_mm2, rig.L0_mm, rig.Lc_mm}, RunSettings{}, 0.0, all));
    play(c, frames, all);
    REQUIRE_FALSE(all.requests.empty());
    CHECK(all.requests.front().kind == RequestKind::extensometer_alert);
    const auto end = std::find_if(all.events.begin(), all.events.end(),
                                  [](const Event& e) { return e.kind == EventKind::yield_end; });
    REQUIRE(end != all.events.end());
    // The alert comes on the frame that ended the yielding (times from arming).
    CHECK(all.requests.front().time_s == Approx(end->time_s).margin(1e-9));
    CHECK(c.handover() == HandoverState::waiting);

    RunOutput step;
    REQUIRE(c.confirm_handover(frames.back().time_s, step));
    CHECK(kinds(step.requests) == std::vector<RequestKind>{RequestKind::resume});
    CHECK(c.handover() == HandoverState::done);
    CHECK_FALSE(c.confirm_handover(frames.back().time_s, step));
}

TEST_CASE("commands that don't fit the state are refused with the state named") {
    RunController c;
    RunOutput out;
    auto r = c.start(0, out);
    REQUIRE_FALSE(r);
    CHECK_THAT(r.error(), Catch::Contains("idle") && Catch::Contains("armed"));
    CHECK_FALSE(c.stop(0, out));
    CHECK_FALSE(c.confirm_handover(0, out));
    REQUIRE(c.arm({80, 80, 120}, RunSettings{}, 0, out));
    auto again = c.arm({80, 80, 120}, RunSettings{}, 0, out);
    REQUIRE_FALSE(again);
    CHECK_THAT(again.error(), Catch::Contains("armed"));
    REQUIRE(c.abort(1, "", out));
    CHECK(c.state() == RunState::aborted);
    CHECK(c.arm({80, 80, 120}, RunSettings{}, 2, out));  // a new run after an aborted one
}

TEST_CASE("a device lost past the limit faults the run, and one that comes back does not") {
    RunController c;
    RunOutput out;
    RunSettings s;
    s.device_lost_limit_s = 5;
    REQUIRE(c.arm({80, 80, 120}, s, 0, out));
    c.device_lost(10);
    c.tick(14, out);
    CHECK(c.state() == RunState::armed);
    c.device_back(14.5);
    c.tick(30, out);
    CHECK(c.state() == RunState::armed);
    c.device_lost(31);
    c.tick(36.5, out);
    CHECK(c.state() == RunState::faulted);
}
