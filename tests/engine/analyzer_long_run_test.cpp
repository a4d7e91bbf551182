// Long runs and stuck sensors: the analyzer's history stays bounded (rows are
// merged in pairs past a row limit) without moving the results, and an
// extensometer that freezes on one value while the crosshead moves is taken
// as lost from where it froze, with strain carried on from the crosshead.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <optional>

#include "curve_maker.hpp"
#include "run_analyzer.hpp"

using namespace tensile;
using namespace tensile::testing;

namespace {
SpecimenGeometry strip(const RigSettings& rig) { return {rig.S0_mm2, rig.L0_mm, rig.Lc_mm}; }

RigSettings noisy_rig() {
    RigSettings rig;
    rig.force_noise_share = 0.0005;   // class 0.5-like scatter (ISO 7500-1 class limits, from memory)
    rig.force_noise_floor_N = 2.0;
    rig.extension_noise_mm = 0.0005;  // well inside the ISO 9513 class 0.5 limit
    return rig;
}

struct Limited {
    Analysed run;
    std::size_t rows = 0;
    std::size_t stride = 0;
};

Limited analyse_limited(const std::vector<Frame>& frames, SpecimenGeometry g, std::size_t row_limit) {
    Analyzer analyzer(g, Profile{});
    analyzer.limit_rows(row_limit);
    Limited out;
    for (const auto& f : frames) analyzer.push(f, out.run.events);
    out.run.results = analyzer.finish();
    out.rows = analyzer.history().size();
    out.stride = analyzer.history().stride();
    return out;
}
}  // namespace

TEST_CASE("History::compact merges older rows evenly and keeps the newest frame by frame") {
    History h;
    for (int k = 0; k < 20; ++k) h.append(k, 10.0 * k, 0.001 * k, k == 2 ? 99.0 : k, k < 6 ? NAN : k, k);
    const RowMap map = h.compact(8, 4);
    REQUIRE(h.size() == 8);
    CHECK(h.stride() == 4);
    CHECK(h.merged_rows() == 4);
    CHECK(h.time_s[0] == 1.5);               // mean of frames 0..3
    CHECK(h.force_N[1] == 55.0);             // mean of 40, 50, 60, 70
    CHECK(h.stress_MPa[0] == Approx((0 + 1 + 99 + 3) / 4.0));
    CHECK(h.running_max[0] == 99.0);         // the maximum survives the merge
    CHECK(std::isnan(h.extension_mm[0]));    // missing in every frame of the group: still missing
    CHECK(h.extension_mm[1] == 6.5);         // mean of the frames that have it (6 and 7)
    CHECK(h.time_s[4] == 16.0);              // the newest four kept as they were
    CHECK(h.time_s[7] == 19.0);
    CHECK(map(5) == 1);
    CHECK(map(16) == 4);
    CHECK(map(19) == 7);
    CHECK(map(20) == 8);                     // one past the end stays one past the end

    // Again, with merged rows already there: the stride doubles, evenly.
    for (int k = 20; k < 28; ++k) h.append(k, 10.0 * k, 0.001 * k, k, k, k);
    const RowMap again = h.compact(8, 4);
    CHECK(h.size() <= 8);
    CHECK(h.stride() == 8);
    CHECK(h.time_s[0] == 3.5);               // frames 0..7
    CHECK(again(3) == 1);
    CHECK(h.time_s[again(15)] == 27.0);  // old row 15 held frame 27
}

TEST_CASE("merged rows are the means of their frames' finite values, gaps and all") {
    // Enough groups that merging takes its wide path (runs summed side by
    // side), with a missing value, an infinity and a wholly missing group
    // among them: each merged row must be the plain mean of the finite values
    // of its frames, summed in frame order (so it is compared exactly).
    History h;
    std::vector<double> ext;
    for (int k = 0; k < 400; ++k) {
        double e = 0.25 * k + 1.0 / (k + 3);
        if (k % 37 == 5) e = NAN;
        if (k == 101) e = INFINITY;
        if (k >= 200 && k < 204) e = NAN;
        ext.push_back(e);
        h.append(k, 10.0 * k, 0.001 * k, k, e, k);
    }
    h.compact(150, 40);
    REQUIRE(h.stride() == 4);
    REQUIRE(h.merged_rows() == 90);  // 360 frames in groups of four, the newest 40 kept
    for (std::size_t g = 0; g < h.merged_rows(); ++g) {
        double sum = 0;
        int count = 0;
        for (std::size_t k = 4 * g; k < 4 * g + 4; ++k)
            if (std::isfinite(ext[k])) {
                sum += ext[k];
                ++count;
            }
        INFO("merged row " << g);
        if (count == 0) CHECK(std::isnan(h.extension_mm[g]));
        else CHECK(h.extension_mm[g] == sum / count);
        CHECK(h.time_s[g] == 4.0 * g + 1.5);
    }
}

TEST_CASE("a run far longer than the row limit gives the same results in bounded memory") {
    // Hill-1944 curve on a 6061-T6-like handbook row (E 68.9 GPa, yield
    // 276 MPa); the 0.2 % offset strength of the curve is σ0.2 (derived).
    auto rig = noisy_rig();
    rig.rate_hz = 2000;
    rig.compliance_mm_per_N = 2e-5;
    rig.fracture_strain = 0.12;
    const auto curve = hill_curve(68900, 276, 25);
    const auto frames = make_run(curve, rig);
    REQUIRE(frames.size() > 40000);

    const auto full = analyse(frames, strip(rig));
    const auto small = analyse_limited(frames, strip(rig), 4096);
    CHECK(small.rows < 4096);
    CHECK(small.stride >= 8);

    const auto& a = full.results;
    const auto& b = small.run.results;
    REQUIRE(b.E_MPa);
    CHECK(*b.E_MPa == Approx(68900).epsilon(0.01));
    CHECK(*b.E_MPa == Approx(*a.E_MPa).epsilon(0.005));
    REQUIRE(b.proof(0.2));
    CHECK(*b.proof(0.2) == Approx(276).epsilon(0.005));
    CHECK(*b.proof(0.2) == Approx(*a.proof(0.2)).epsilon(0.001));
    double e_at_max = 0;
    const double exact_max = max_stress(curve, rig.fracture_strain, &e_at_max);
    REQUIRE(b.Rm_MPa);
    CHECK(*b.Rm_MPa == Approx(exact_max).epsilon(0.005));  // the curve's own maximum (derived), noise on top
    CHECK(*b.Rm_MPa == Approx(*a.Rm_MPa).epsilon(0.0005));
    REQUIRE(b.At_pct);
    CHECK(*b.At_pct == Approx(100.0 * rig.fracture_strain).margin(0.1));
    CHECK(*b.At_pct == Approx(*a.At_pct).margin(0.02));
    CHECK(small.run.count(EventKind::fracture) == 1);
    CHECK(small.run.count(EventKind::proof_strength) == 1);
    // Event frames count input frames, not rows.
    const auto fracture = small.run.first(EventKind::fracture);
    REQUIRE(fracture);
    CHECK(fracture->frame == Approx(static_cast<double>(frames.size())).epsilon(0.01));
}

TEST_CASE("a yield point survives row merging") {
    // EN 10025-2: S355 has ReH ≥ 355 MPa; 380/362 and Ae 1.8 % are demo
    // values in that range, as in the yield-point test.
    RigSettings rig = noisy_rig();
    rig.switch_strain = 0.004;
    rig.plastic_rate_per_s = 0.002;
    rig.end_strain = 0.06;
    const double E = 210000, ReH = 380, ReL = 362, Ae = 0.018;
    const auto frames = make_run(yield_point_curve(E, ReH, ReL, Ae, 900, 0.5), rig);
    const auto small = analyse_limited(frames, strip(rig), 2048);
    REQUIRE(small.stride >= 8);
    const auto& r = small.run.results;
    REQUIRE(r.ReH_MPa);
    CHECK(*r.ReH_MPa == Approx(ReH).epsilon(0.003));
    REQUIRE(r.ReL_MPa);
    CHECK(*r.ReL_MPa == Approx(ReL).epsilon(0.006));
    REQUIRE(r.Ae_pct);
    CHECK(*r.Ae_pct == Approx(100.0 * Ae).margin(0.2));
}

TEST_CASE("an extensometer frozen on one value is lost from where it froze") {
    // Common practice: a clip-on extensometer can slip or its channel can
    // hang, repeating its last value; strain must then come from the
    // crosshead (as after a hand-over), never from the stuck reading.
    auto rig = noisy_rig();
    rig.compliance_mm_per_N = 2e-5;  // 0.02 mm/kN: frame and grips (demo value)
    rig.fracture_strain = 0.15;
    const auto curve = hill_curve(68900, 276, 25);
    auto frames = make_run(curve, rig);
    const double freeze_at = 0.03;  // strain
    std::optional<double> stuck;
    for (auto& f : frames) {
        if (!stuck && f.extension_mm > freeze_at * rig.L0_mm) stuck = f.extension_mm;
        if (stuck) f.extension_mm = *stuck;
    }
    const auto run = analyse(frames, strip(rig));
    const auto& r = run.results;
    REQUIRE(run.count(EventKind::extensometer_lost) == 1);
    const auto lost = run.first(EventKind::extensometer_lost);
    CHECK(lost->label == "extensometer reading froze");
    CHECK(lost->strain == Approx(freeze_at).margin(0.001));  // dated where it froze, not where it was noticed
    REQUIRE(r.proof(0.2));
    CHECK(*r.proof(0.2) == Approx(276).epsilon(0.005));  // Hill-1944 (derived), before the freeze
    // Fracture elongation from the crosshead, within the hand-over test's
    // margin of the curve's own strain at fracture.
    REQUIRE(r.At_pct);
    CHECK(*r.At_pct == Approx(100.0 * rig.fracture_strain).margin(0.2));
    CHECK(r.At_source == StrainSource::crosshead);
    const bool warned = std::any_of(r.warnings.begin(), r.warnings.end(),
                                    [](const std::string& w) { return w.find("froze") != std::string::npos; });
    CHECK(warned);
}

TEST_CASE("a noise-free extensometer at rest or in a slow elastic ramp is not taken as frozen") {
    // A digital extensometer without noise repeats its count between steps;
    // only repeats while the crosshead travels 0.1 % of L0 under load count.
    RigSettings rig;
    rig.compliance_mm_per_N = 2e-5;
    rig.end_strain = 0.03;
    auto frames = make_run(hill_curve(205000, 370, 18), rig);
    for (auto& f : frames) f.extension_mm = std::round(f.extension_mm / 0.0005) * 0.0005;  // 0.5 µm counts
    const auto run = analyse(frames, {rig.S0_mm2, rig.L0_mm, rig.Lc_mm});
    CHECK(run.count(EventKind::extensometer_lost) == 0);
    REQUIRE(run.results.proof(0.2));
    CHECK(*run.results.proof(0.2) == Approx(370).epsilon(0.005));  // Hill-1944 (derived)
}
