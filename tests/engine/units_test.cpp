// Unit conversions and specimen geometry against published definitions.
#include <catch2/catch.hpp>

#include <cmath>
#include <numbers>

#include "engine/specimen.hpp"
#include "engine/units.hpp"

using namespace tensile;

TEST_CASE("force units convert by the NIST SP 811 factors") {
    // NIST-SP811: 1 lbf = 4.4482216152605 N exactly; 1 kgf = 9.80665 N exactly.
    CHECK(to_newtons(1.0, ForceUnit::pound_force) == 4.4482216152605);
    CHECK(to_newtons(1.0, ForceUnit::kilogram_force) == 9.80665);
    CHECK(to_newtons(2.5, ForceUnit::kilonewton) == 2500.0);
    CHECK(to_newtons(7.0, ForceUnit::newton) == 7.0);
}

TEST_CASE("length units convert by the NIST SP 811 factors") {
    // NIST-SP811: 1 in = 25.4 mm exactly.
    CHECK(to_millimetres(2.0, LengthUnit::inch) == 50.8);
    CHECK(to_millimetres(1500.0, LengthUnit::micrometre) == Approx(1.5).epsilon(1e-15));
}

TEST_CASE("stress reports in ksi and psi per NIST SP 811") {
    // NIST-SP811: 1 ksi = 6.894757 MPa; 1 psi = 6894.757 Pa.
    CHECK(from_megapascal(6.894757, StressUnit::ksi) == Approx(1.0).epsilon(1e-12));
    CHECK(from_megapascal(0.006894757, StressUnit::psi) == Approx(1.0).epsilon(1e-12));
    // Derived: 1 lbf over 1 in² is 1 psi = 4.4482216152605 / 645.16 MPa.
    CHECK(from_megapascal(4.4482216152605 / 645.16, StressUnit::psi) == Approx(1.0).epsilon(1e-6));
}

TEST_CASE("unit names parse and unknown names are refused") {
    CHECK(parse_force_unit("kN") == ForceUnit::kilonewton);
    CHECK(parse_length_unit("in") == LengthUnit::inch);
    CHECK(parse_stress_unit("ksi") == StressUnit::ksi);
    CHECK_FALSE(parse_force_unit("tonne").has_value());
    CHECK_FALSE(parse_length_unit("ft").has_value());
}

TEST_CASE("proportional gauge length is 5.65·√S0, i.e. 5 d for a round bar") {
    // ISO6892-L0: L0 = 5.65·√S0 (= 5 d for a round bar); 11.3·√S0 = 10 d (derived).
    Specimen round;
    round.shape = SectionShape::round;
    round.diameter_mm = 10.0;
    round.proportional_factor = 5.65;
    auto g = check(round);
    REQUIRE(g.ok());
    CHECK(g->S0_mm2 == Approx(std::numbers::pi * 25.0).epsilon(1e-12));
    CHECK(g->L0_mm == Approx(50.0).epsilon(0.002));  // 5.65 is 5·√(4/π) rounded
    round.proportional_factor = 11.3;
    CHECK(check(round)->L0_mm == Approx(100.0).epsilon(0.002));
}

TEST_CASE("cross-sections of each shape") {
    Specimen s;
    s.gauge_length_mm = 50;
    s.shape = SectionShape::rectangular;
    s.width_mm = 12.5;  // E8-specimens: sheet-type W = 12.5 mm, G = 50 mm
    s.thickness_mm = 2.0;
    CHECK(check(s)->S0_mm2 == Approx(25.0));
    s.shape = SectionShape::tube;
    s.diameter_mm = 20;
    s.wall_mm = 2;
    CHECK(check(s)->S0_mm2 == Approx(std::numbers::pi / 4 * (400 - 256)));
    s.shape = SectionShape::given_area;
    s.area_mm2 = 78.5;
    CHECK(check(s)->S0_mm2 == 78.5);
}

TEST_CASE("bad dimensions name the field and what was expected") {
    Specimen s;
    s.shape = SectionShape::rectangular;
    s.width_mm = 12.5;
    s.thickness_mm = -1;
    s.gauge_length_mm = 50;
    auto g = check(s);
    REQUIRE_FALSE(g.ok());
    CHECK_THAT(g.error(), Catch::Contains("thickness") && Catch::Contains("positive"));
    s.thickness_mm = 2;
    s.gauge_length_mm = 0;
    CHECK_THAT(check(s).error(), Catch::Contains("gauge length"));
    s.shape = SectionShape::tube;
    s.gauge_length_mm = 50;
    s.diameter_mm = 10;
    s.wall_mm = 6;
    CHECK_THAT(check(s).error(), Catch::Contains("wall"));
}
