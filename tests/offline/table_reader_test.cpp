// Reading recorded runs: the table CSV, lab variants, and bad input that must
// be refused with a message naming the line, the column and what was expected.
#include <catch2/catch.hpp>

#include "daemon/offline/table_reader.hpp"

using namespace tensile;

TEST_CASE("the table CSV reads as written, empty cells as absent") {
    const auto t = read_table("time_s,force_N,extension_mm,crosshead_mm\n0.0,12.5,0.001,0.01\n0.001,13,,0.02\n");
    REQUIRE(t);
    REQUIRE(t->frames.size() == 2);
    CHECK(t->frames[0].force_N == 12.5);
    CHECK(t->frames[1].time_s == 0.001);
    CHECK_FALSE(t->frames[1].has_extension());
    CHECK(t->frames[1].crosshead_mm == 0.02);
}

TEST_CASE("extra columns of the export CSV are ignored") {
    const auto t = read_table(
        "time_s,force_N,extension_mm,crosshead_mm,stress_MPa,strain_pct\n0.5,100,0.01,0.02,1.25,0.0125\n");
    REQUIRE(t);
    CHECK(t->frames[0].force_N == 100);
}

TEST_CASE("units in the header convert by the NIST SP 811 factors") {
    // NIST-SP811: 1 lbf = 4.4482216152605 N, 1 in = 25.4 mm exactly.
    const auto t = read_table("Time [ms];Force [lbf];Extension (in)\n1000;2,5;0,01\n");
    REQUIRE(t);
    CHECK(t->frames[0].time_s == Approx(1.0));
    CHECK(t->frames[0].force_N == Approx(2.5 * 4.4482216152605));
    CHECK(t->frames[0].extension_mm == Approx(0.254));
    const auto kn = read_table("time_s,force_kN,extension_um\n0,1.5,250\n");
    REQUIRE(kn);
    CHECK(kn->frames[0].force_N == Approx(1500));
    CHECK(kn->frames[0].extension_mm == Approx(0.25));
}

TEST_CASE("tab separators, decimal commas and column numbers") {
    const auto t = read_table("# exported by a data logger\n1\t0,5\t200,5\t0,1\n2\t1,0\t201\t0,2\n",
                              *parse_column_spec("time=2,force=3,extension=4"));
    REQUIRE(t);
    REQUIRE(t->frames.size() == 2);
    CHECK(t->frames[0].time_s == 0.5);
    CHECK(t->frames[0].force_N == 200.5);
    CHECK(t->frames[0].extension_mm == 0.1);
}

TEST_CASE("a file without a time column needs the sample rate") {
    TableLayout layout = *parse_column_spec("force=1,extension=2");
    auto refused = read_table("10,0.1\n20,0.2\n", layout);
    REQUIRE_FALSE(refused);
    CHECK_THAT(refused.error(), Catch::Contains("--rate"));
    layout.rate_hz = 100;
    auto t = read_table("10,0.1\n20,0.2\n", layout);
    REQUIRE(t);
    CHECK(t->frames[1].time_s == Approx(0.01));
}

TEST_CASE("bad input names the line, the column and what was expected") {
    auto bad = read_table("time_s,force_N,extension_mm\n0,1,0\n0.1,abc,0\n");
    REQUIRE_FALSE(bad);
    CHECK_THAT(bad.error(), Catch::Contains("line 3") && Catch::Contains("column 2") && Catch::Contains("force") &&
                                Catch::Contains("'abc'") && Catch::Contains("expected a decimal number"));

    auto short_row = read_table("time_s,force_N,extension_mm\n0,1,0\n0.1\n");
    REQUIRE_FALSE(short_row);
    CHECK_THAT(short_row.error(), Catch::Contains("line 3"));

    auto unit = read_table("time_s,force_tonnes\n0,1\n");
    REQUIRE_FALSE(unit);
    CHECK_THAT(unit.error(), Catch::Contains("unknown force unit 'tonnes'") && Catch::Contains("kN"));

    auto empty = read_table("time_s,force_N\n");
    REQUIRE_FALSE(empty);
    CHECK_THAT(empty.error(), Catch::Contains("no data rows"));

    auto nan = read_table("time_s,force_N\n0,nan\n");
    REQUIRE_FALSE(nan);
    CHECK_THAT(nan.error(), Catch::Contains("'nan'"));

    auto spec = parse_column_spec("force=two");
    REQUIRE_FALSE(spec);
    CHECK_THAT(spec.error(), Catch::Contains("NAME=NUMBER"));
}
