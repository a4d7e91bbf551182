// The material model against published laws (Considère with Hollomon, Hill's
// proof strength), the handbook rows the presets follow, and the loader's
// error messages. Sources are named beside each check (labels of
// shared/REFERENCES.md).
#include <catch2/catch.hpp>

#include <cmath>

#include "material_file.hpp"
#include "presets.hpp"
#include "truth.hpp"

using namespace tensile;
using namespace tensile::sim;

namespace {
struct Loaded {
    MaterialFile file;
    MaterialCurve curve;
    MaterialTruth truth;
};
Loaded load(const std::string& name) {
    auto f = resolve_material(name);
    REQUIRE(f.ok());
    auto c = make_curve(f->material);
    REQUIRE(c.ok());
    auto g = check(f->specimen);
    REQUIRE(g.ok());
    return {*f, *c, compute_truth(*c, *g)};
}
}  // namespace

TEST_CASE("Hollomon preset: maximum force where Considere puts it") {
    const Loaded m = load("harbourline-dc04-lot5");
    const double K = 500, n = 0.2;
    // Considere-Hollomon, REFERENCES.md: Rm = K·n^n·e^-n, check value 296.70 MPa for K 500, n 0.2.
    CHECK(m.truth.Rm_MPa == Approx(296.70).margin(0.005));
    CHECK(m.truth.Rm_MPa == Approx(K * std::pow(n, n) * std::exp(-n)).epsilon(1e-9));
    // Considere-Hollomon: engineering strain at Fm = e^n − 1 = 0.22140.
    CHECK(m.truth.Agt_pct / 100 == Approx(0.22140).margin(5e-6));
    CHECK(m.truth.Agt_pct / 100 == Approx(std::exp(n) - 1).epsilon(1e-9));
    // ISO-10275 (REFERENCES.md): for pure Hollomon data the log-log fit recovers n exactly.
    REQUIRE(m.truth.n_value);
    CHECK(*m.truth.n_value == Approx(n).epsilon(1e-9));
    // No yield point in a continuous law: the JSON leaves ReH out.
    CHECK_FALSE(m.truth.ReH_MPa);
}

TEST_CASE("Hill preset: proof strength at 0.2 % offset is sigma0.2") {
    const Loaded m = load("harbourline-6061t6-lot12");
    const MaterialSpec& s = m.file.material;
    // Hill-1944 (REFERENCES.md): in the law's own terms the 0.2 % offset proof
    // strength is σ0.2 exactly when the offset line uses the same E.
    auto true_curve = [&](double e) { return m.curve.law_true_stress_MPa(e); };
    const double e_proof = proof_strain(true_curve, s.E_MPa, 0.002, 0.2);
    CHECK(true_curve(e_proof) == Approx(s.hill_sigma02_MPa).epsilon(1e-9));

    // The engineering Rp0.2 (what ISO 6892-1 reports), derived independently of
    // the model's solver: Hill's law is explicit in true stress, so bisect on
    // true stress for the point where engineering plastic strain is 0.002.
    auto eng_offset = [&](double st) {
        const double et = st / s.E_MPa + 0.002 * std::pow(st / s.hill_sigma02_MPa, s.hill_n);
        const double e = std::exp(et) - 1;
        return e - st / (1 + e) / s.E_MPa;
    };
    double lo = 1, hi = 2 * s.hill_sigma02_MPa;
    for (int i = 0; i < 200; ++i) (eng_offset(0.5 * (lo + hi)) < 0.002 ? lo : hi) = 0.5 * (lo + hi);
    const double st = 0.5 * (lo + hi);
    const double e = std::exp(st / s.E_MPa + 0.002 * std::pow(st / s.hill_sigma02_MPa, s.hill_n)) - 1;
    REQUIRE(m.truth.Rp02_MPa);
    CHECK(*m.truth.Rp02_MPa == Approx(st / (1 + e)).epsilon(1e-7));
}

TEST_CASE("presets follow their handbook rows") {
    // 6061-T6 (REFERENCES.md, Aluminum Association typical): yield 276, tensile 310 MPa, elongation 12 %.
    const Loaded al = load("harbourline-6061t6-lot12");
    CHECK(*al.truth.Rp02_MPa == Approx(276).epsilon(0.02));
    CHECK(al.truth.Rm_MPa == Approx(310).epsilon(0.02));
    CHECK(al.truth.A_pct == Approx(12).epsilon(1e-9));
    CHECK(al.truth.E_MPa == 68900);
    // AISI-1018-CD: yield 370, tensile 440 MPa, elongation 15 % (with spread between sources).
    const Loaded cd = load("harbourline-1018cd-lot3");
    CHECK(*cd.truth.Rp02_MPa == Approx(370).epsilon(0.03));
    CHECK(cd.truth.Rm_MPa == Approx(440).epsilon(0.03));
    // EN10025-2: S355 ReH >= 355 MPa (t <= 16 mm), Rm 470–630 MPa.
    const Loaded st = load("harbourline-s355-lot7");
    CHECK(*st.truth.ReH_MPa >= 355);
    CHECK(st.truth.Rm_MPa >= 470);
    CHECK(st.truth.Rm_MPa <= 630);
    // Common practice (REFERENCES.md): soft copper alloys reach Rp0.2 below 40 % of Rm.
    const Loaded cu = load("harbourline-cu-annealed-lot21");
    CHECK(*cu.truth.Rp02_MPa < 0.4 * cu.truth.Rm_MPa);
    // ISO6892-L0: proportional gauge length 5.65·√S0.
    CHECK(cu.truth.L0_mm == Approx(5.65 * std::sqrt(cu.truth.S0_mm2)).epsilon(1e-12));
}

TEST_CASE("yield point: ReH peak, plateau never below ReL, Ae long") {
    const Loaded m = load("harbourline-s355-lot7");
    const MaterialCurve& c = m.curve;
    // The sampled scan plus the exact end of the elastic line: no sample may beat ReH.
    double peak = c.stress_MPa(c.upper_yield_strain()), low = 1e9;
    for (double e = 0; e <= c.hardening_start_strain(); e += 1e-6) {
        const double s = c.stress_MPa(e);
        peak = std::max(peak, s);
        if (e > c.upper_yield_strain() + 0.0003) low = std::min(low, s);
    }
    CHECK(peak == Approx(*m.truth.ReH_MPa).epsilon(1e-6));
    CHECK(low == Approx(*m.truth.ReL_MPa).epsilon(1e-5));
    CHECK(100 * (c.hardening_start_strain() - c.upper_yield_strain()) == Approx(*m.truth.Ae_pct).epsilon(1e-9));
    // Hardening picks up continuously at ReL where the plateau ends.
    CHECK(c.stress_MPa(c.hardening_start_strain() + 1e-9) == Approx(*m.truth.ReL_MPa).epsilon(1e-6));
    // The maximum of the whole curve is the Fm of the truth.
    double top = 0;
    for (double e = 0; e <= c.fracture_strain(); e += 1e-5) top = std::max(top, c.stress_MPa(e));
    CHECK(top == Approx(m.truth.Rm_MPa).epsilon(1e-7));
}

TEST_CASE("fracture strain gives the requested A after the elastic part") {
    for (const PresetText& p : preset_texts()) {
        const Loaded m = load(std::string(p.name));
        INFO(p.name);
        CHECK(m.truth.A_pct == Approx(m.file.material.A_pct).epsilon(1e-9));
        CHECK(m.truth.At_pct > m.truth.A_pct);
        CHECK(m.truth.Agt_pct < m.truth.At_pct);
        CHECK(m.file.material.name == p.name);  // a preset's name is its file name
    }
}

TEST_CASE("sampled curve follows the exact curve") {
    const Loaded m = load("harbourline-s355-lot7");
    const CurveTable table(m.curve);
    for (double e = 0.0001; e < m.curve.fracture_strain(); e += 0.00731)
        CHECK(table.stress_MPa(e) == Approx(m.curve.stress_MPa(e)).margin(0.05));
}

TEST_CASE("material files: a bad key is named with what was expected") {
    const std::string good = "name = \"x\"\n[elastic]\nE_MPa = 200000\n[hardening]\nlaw = \"hollomon\"\nK_MPa = 500\nn = 0.2\n"
                             "[fracture]\nA_pct = 30\n[specimen]\nshape = \"round\"\ndiameter_mm = 10\ngauge_length_mm = 50\nparallel_length_mm = 60\n";
    REQUIRE(parse_material(good, "t.toml").ok());
    auto typo = parse_material(good + "[extra]\n", "t.toml");
    REQUIRE_FALSE(typo.ok());
    CHECK_THAT(typo.error(), Catch::Contains("unknown key 'extra'") && Catch::Contains("expected one of"));
    std::string bad_law = good;
    bad_law.replace(bad_law.find("hollomon"), 8, "swift");
    auto law = parse_material(bad_law, "t.toml");
    REQUIRE_FALSE(law.ok());
    CHECK_THAT(law.error(), Catch::Contains("\"hill\", \"hollomon\" or \"voce\""));
    std::string bad_n = good;
    bad_n.replace(bad_n.find("n = 0.2"), 7, "n = 1.5");
    auto f = parse_material(bad_n, "t.toml");
    REQUIRE(f.ok());
    auto c = make_curve(f->material);
    REQUIRE_FALSE(c.ok());
    CHECK_THAT(c.error(), Catch::Contains("Hollomon exponent n must be between 0 and 1"));
    auto syntax = parse_material("name = ", "t.toml");
    REQUIRE_FALSE(syntax.ok());
    CHECK_THAT(syntax.error(), Catch::Contains("t.toml:1"));
}
