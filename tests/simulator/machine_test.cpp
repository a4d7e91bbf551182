// The frame model: test control, compliance, hold/resume/stop and fracture.
#include <catch2/catch.hpp>

#include <cmath>

#include "machine.hpp"
#include "presets.hpp"
#include "truth.hpp"

using namespace tensile;
using namespace tensile::sim;

namespace {
struct Rig {
    MaterialFile file;
    MaterialCurve curve;
    SpecimenGeometry g;
    MaterialTruth truth;
    CurveTable table;
    MachineConfig config;
};
Rig make_rig(const std::string& name) {
    auto f = resolve_material(name);
    REQUIRE(f.ok());
    auto c = make_curve(f->material);
    REQUIRE(c.ok());
    auto g = check(f->specimen);
    REQUIRE(g.ok());
    auto mc = check(MachineConfig{}, *g);
    REQUIRE(mc.ok());
    return {*f, *c, *g, compute_truth(*c, *g), CurveTable(*c), *mc};
}
}  // namespace

TEST_CASE("strain-rate control, then crosshead speed after the switch") {
    Rig r = make_rig("harbourline-dc04-lot5");
    Machine m(r.table, r.g, r.config, r.truth.Fm_N, {});
    // ISO6892-MethodA (from memory): range 2 is 0.00025 1/s; range 4 is 0.0067 1/s.
    m.advance_to(20.0);
    CHECK(m.state().strain == Approx(0.00025 * 20).epsilon(1e-12));
    CHECK(r.config.crosshead_speed_mm_s == Approx(0.0067 * 120).epsilon(1e-12));
    // The crosshead has travelled more than the specimen stretched: compliance and slack.
    CHECK(m.state().crosshead_mm > r.g.Lc_mm * m.state().strain + 0.004 * m.state().force_N / 1000);
    m.advance_to(50.0);  // past the 1 % switch (40 s)
    const double x0 = m.state().crosshead_mm;
    m.advance_to(51.0);
    CHECK(m.state().crosshead_mm - x0 == Approx(r.config.crosshead_speed_mm_s).epsilon(1e-6));
}

TEST_CASE("hold freezes the crosshead and relaxes the force a little, and resume goes on") {
    Rig r = make_rig("harbourline-s355-lot7");
    Machine m(r.table, r.g, r.config, r.truth.Fm_N, {});
    m.advance_to(45.0);  // past yield, under crosshead control
    m.hold();
    const RigState before = m.state();
    m.advance_to(55.0);
    CHECK(m.state().crosshead_mm == before.crosshead_mm);
    CHECK(m.state().force_N < before.force_N);
    CHECK(m.state().force_N > before.force_N * (1 - r.config.relax_share));
    m.resume();
    m.advance_to(56.0);
    CHECK(m.state().crosshead_mm == Approx(before.crosshead_mm + r.config.crosshead_speed_mm_s).epsilon(1e-6));
}

TEST_CASE("fracture: the force falls to near zero within milliseconds, at the model's strain") {
    Rig r = make_rig("harbourline-6061t6-lot12");
    std::vector<Mark> marks{{"max_force_s", r.curve.uniform_strain(), {}}};
    Machine m(r.table, r.g, r.config, r.truth.Fm_N, marks);
    double t = 0, last_force = 0;
    while (!m.fracture_time_s() && t < 1000) {
        last_force = m.state().force_N;
        t += 0.0001;
        m.advance_to(t);
    }
    REQUIRE(m.fracture_time_s());
    CHECK(m.state().strain == Approx(r.curve.fracture_strain()));
    REQUIRE(m.marks()[0].time_s);
    CHECK(*m.marks()[0].time_s < *m.fracture_time_s());
    m.advance_to(*m.fracture_time_s() + 0.005);
    // Common practice (REFERENCES.md): fracture drops most of the force within milliseconds.
    CHECK(m.state().force_N < 0.02 * last_force);
}
