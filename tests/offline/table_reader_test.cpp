// Reading recorded runs: the table CSV, lab variants, and bad input that must
// be refused with a message naming the line, the column and what was expected.
#include <catch2/catch.hpp>

#include <algorithm>
#include <array>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

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

TEST_CASE("column names are read by their words, and derived channels are left alone") {
    // Names of the kind instruments and spreadsheets write (our own examples):
    // a counter, the test time, two force-like channels of which only the
    // measured one counts, a numbered strain channel with its unit in the
    // last brackets, the crosshead as "displacement", rates and true values.
    const auto t = read_table(
        "Sample no,Test time (s),Load cell temp (C),Load (kN),Crosshead speed (mm/min),Displacement (mm),"
        "Extension rate (mm/s),Extensometer 1 (mm),True stress (MPa),Peak load (kN)\n"
        "1,0.5,21.0,1.5,2.0,0.20,0.01,0.05,20.0,1.5\n");
    REQUIRE(t);
    REQUIRE(t->frames.size() == 1);
    CHECK(t->frames[0].time_s == 0.5);
    CHECK(t->frames[0].force_N == Approx(1500));
    CHECK(t->frames[0].crosshead_mm == 0.20);
    CHECK(t->frames[0].extension_mm == 0.05);

    // "crosshead extension" is the crosshead's; "test_time" ends in a word of
    // its name, not a unit.
    const auto u = read_table("test_time,standard_force_N,crosshead_extension_mm,extension_mm\n2,10,0.3,0.1\n");
    REQUIRE(u);
    CHECK(u->frames[0].time_s == 2);
    CHECK(u->frames[0].force_N == 10);
    CHECK(u->frames[0].crosshead_mm == 0.3);
    CHECK(u->frames[0].extension_mm == 0.1);

    // A name that says nothing we know is no column of ours: the reader asks
    // for the columns rather than guess.
    const auto none = read_table("a,b,c\n1,2,3\n");
    REQUIRE_FALSE(none);
    CHECK_THAT(none.error(), Catch::Contains("--columns"));
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

// Rows after the first take a shorter way through the reader; whatever way a
// row takes, each value must be the double the C library's strtod gives for
// the cell (correctly rounded, the independent reference here), and odd rows
// (CRLF, quotes, spaces, exponents, signs, long mantissas, extra or skipped
// columns, comments, a last line without its newline) must read as they did.
TEST_CASE("every row reads to the value strtod gives for its cell, whichever way it is read") {
    const std::vector<std::string> cells = {
        "0",        "0.001000", "-0.000450", "29534.987", "5.",        ".5",       "-0.0",    "123456789012345",
        "1.5e3",    "+2.5",     "\"7.25\"",  " 3.5",      "4.5 ",      "0.1234567890123456789", "99999999.99999",
        "1.0000001", "-12345678.1234567", "100000000", "0.00000001"};
    std::string text = "time_s,force_N,extension_mm,crosshead_mm,note\n0,1,2,3,x\n";
    std::vector<std::array<std::string, 4>> rows;
    for (std::size_t i = 0; i < 400; ++i) {
        std::array<std::string, 4> r;
        for (std::size_t c = 0; c < 4; ++c) r[c] = cells[(i * 7 + c * 5 + i / 19) % cells.size()];
        rows.push_back(r);
        text += r[0] + "," + r[1] + "," + r[2] + "," + r[3];
        if (i % 3 == 0) text += ",extra";
        text += i % 5 == 0 ? "\r\n" : "\n";
        if (i % 97 == 0) text += "# a comment\n\n";
    }
    text += "7,8,9,10";  // no newline at the end
    const auto t = read_table(text);
    REQUIRE(t);
    REQUIRE(t->frames.size() == rows.size() + 2);
    auto expect = [](const std::string& cell) {
        std::string s = cell;
        s.erase(std::remove_if(s.begin(), s.end(), [](char ch) { return ch == '"' || ch == ' '; }), s.end());
        return std::strtod(s.c_str(), nullptr);
    };
    for (std::size_t i = 0; i < rows.size(); ++i) {
        const Frame& f = t->frames[i + 1];
        const double got[4] = {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm};
        for (std::size_t c = 0; c < 4; ++c) {
            INFO("row " << i << " column " << c << " cell '" << rows[i][c] << "'");
            CHECK(std::memcmp(&got[c], &static_cast<const double&>(expect(rows[i][c])), sizeof(double)) == 0);
        }
    }
    CHECK(t->frames.back().crosshead_mm == 10);

    // Columns picked by number skip the ones between.
    TableLayout layout;
    layout.time_column = 1;
    layout.force_column = 3;
    const auto picked = read_table("0,x,1\n0.5,skip me,2.25\n1,,3.5\n", layout);
    REQUIRE(picked);
    REQUIRE(picked->frames.size() == 3);
    CHECK(picked->frames[1].force_N == 2.25);
    CHECK(picked->frames[2].force_N == 3.5);
}

TEST_CASE("a bad cell deep in a long file is named by its line and column") {
    std::string text = "time_s,force_N,extension_mm\n";
    for (int i = 0; i < 1000; ++i) text += std::to_string(i) + ".5,1" + std::to_string(i) + ",0.25\n";
    for (const std::string bad : {"1.2.3", "-", ".", "--1", "1;5", "0x10"}) {
        const auto r = read_table(text + "1000.5," + bad + ",0.25\n");
        REQUIRE_FALSE(r);
        CHECK_THAT(r.error(), Catch::Contains("line 1002") && Catch::Contains("column 2") &&
                                  Catch::Contains("expected a decimal number"));
    }
    const auto short_row = read_table(text + "1000.5,7\n");
    REQUIRE_FALSE(short_row);
    CHECK_THAT(short_row.error(), Catch::Contains("line 1002") && Catch::Contains("2 columns"));
}
