// Recorded runs as instruments and spreadsheets export them: a byte-order
// mark, notes above the column names, a row of units under them. Common
// practice, from memory: spreadsheet "CSV UTF-8" exports begin with the
// UTF-8 byte-order mark EF BB BF (Unicode Standard, ch. 23.8); test-machine
// exports put specimen and settings lines above the table and often give the
// units in a row of their own. Unit factors are those of NIST SP 811
// (1 kN = 1000 N; 1 in = 25.4 mm exactly).
#include <catch2/catch.hpp>

#include <string>

#include "daemon/offline/table_reader.hpp"
#include "daemon/offline/table_start.hpp"

using namespace tensile;

TEST_CASE("a UTF-8 byte-order mark before the column names is skipped") {
    const auto t = read_table("\xEF\xBB\xBFtime_s,force_N,extension_mm\n0,10,0.001\n0.1,20,0.002\n");
    REQUIRE(t);
    REQUIRE(t->frames.size() == 2);
    CHECK(t->frames[1].time_s == 0.1);
    CHECK(t->frames[1].force_N == 20);
    CHECK(t->frames[1].extension_mm == 0.002);
}

TEST_CASE("notes above the column names are skipped, and line numbers still count from the top") {
    const std::string notes =
        "Specimen: HB-7 (our demo label)\n"
        "Date: 2026-03-14,Operator: A. N. Other\n"
        "Width,12.5,mm\n"
        "\n"
        "# comment\n";
    const auto t = read_table(notes + "time_s,force_kN,extension_mm\n0,1.5,0.001\n0.1,2.5,0.002\n");
    REQUIRE(t);
    REQUIRE(t->frames.size() == 2);
    CHECK(t->frames[0].force_N == Approx(1500));  // NIST SP 811: 1 kN = 1000 N
    CHECK_THAT(t->notes.front(), Catch::Contains("3 line(s) of notes"));

    // The bad cell is on line 8 of the file: five lines of notes, the names, two rows.
    const auto bad = read_table(notes + "time_s,force_kN,extension_mm\n0,1.5,0.001\n0.1,x,0.002\n");
    REQUIRE_FALSE(bad);
    CHECK_THAT(bad.error(), Catch::Contains("line 8") && Catch::Contains("column 2"));
}

TEST_CASE("a row of units under the column names gives their units") {
    SECTION("comma separated, bare units") {
        const auto t = read_table("Time,Force,Extension\ns,kN,in\n0,1.5,0.01\n2,2.5,0.02\n");
        REQUIRE(t);
        REQUIRE(t->frames.size() == 2);
        CHECK(t->frames[1].force_N == Approx(2500));         // 1 kN = 1000 N
        CHECK(t->frames[1].extension_mm == Approx(0.508));   // 1 in = 25.4 mm
        CHECK_THAT(t->notes.front(), Catch::Contains("units from the row under the names"));
    }
    SECTION("semicolons, decimal commas, bracketed units, a column we skip, notes above") {
        const auto t = read_table(
            "Run;7\n\"Time\";\"Load\";\"Stress\";\"Extension\"\n(ms);(N);(MPa);(mm)\n0;10,5;0,13;0,001\n500;20,5;0,26;0,002\n");
        REQUIRE(t);
        REQUIRE(t->frames.size() == 2);
        CHECK(t->frames[1].time_s == Approx(0.5));
        CHECK(t->frames[1].force_N == Approx(20.5));
        CHECK(t->frames[1].extension_mm == Approx(0.002));
    }
    SECTION("a unit in a name stands; the units row fills in the names without one") {
        const auto t = read_table("time,force_kN\nms,\n0,1\n1000,2\n");
        REQUIRE(t);
        CHECK(t->frames[1].time_s == Approx(1.0));
        CHECK(t->frames[1].force_N == Approx(2000));
    }
    SECTION("an unknown unit in the units row is named") {
        const auto bad = read_table("Time,Force\ns,tonnes\n0,1\n");
        // 'tonnes' is no unit we know, so that row is not a units row: it is
        // taken as the column names, which then lack a force column.
        REQUIRE_FALSE(bad);
        CHECK_THAT(bad.error(), Catch::Contains("no force column"));
    }
}

TEST_CASE("locating the table: what counts as notes, names, units and data") {
    CHECK(locate_table("time_s,force_N\n0,1\n").begin == 0);
    CHECK(locate_table("0,1\n1,2\n").begin == 0);  // no names at all
    const auto s = locate_table("a: b\nc\ntime_s,force_N\ns,N\n0,1\n");
    CHECK(s.begin == 7);
    CHECK(s.lines_before == 2);
    CHECK(s.preamble_lines == 2);
    CHECK(s.units_at == 22);
    // A date is no number: the line that holds it is a note, not data.
    CHECK(locate_table("2026-03-14\ntime_s,force_N\n0,1\n").begin == 11);
    // Data further down than the lines looked at: read from the top as before.
    std::string far;
    for (std::size_t i = 0; i < table_start_max_lines + 5; ++i) far += "note\n";
    CHECK(locate_table(far + "time_s,force_N\n0,1\n").begin == 0);

    CHECK(is_units_row("s,kN,mm", ','));
    CHECK(is_units_row("[s];[N];;[%]", ';'));
    CHECK_FALSE(is_units_row("time,force", ','));
    CHECK_FALSE(is_units_row(",,", ','));
    CHECK(bare_unit(" (kN) ") == "kN");
}

// A curve exported as stress and strain: force = stress·S0 and extension =
// strain·L0 (the definitions of engineering stress and strain, ISO 6892-1
// §3); psi and ksi by NIST SP 811 (1 psi = 6.894 757 kPa).
TEST_CASE("stress and strain columns stand in for force and extension when the specimen is known") {
    TableLayout layout;
    layout.area_mm2 = 80;
    layout.gauge_length_mm = 50;
    SECTION("MPa and percent") {
        const auto t = read_table("time_s,stress_MPa,strain_pct\n0,0,0\n1,100,0.05\n", layout);
        REQUIRE(t);
        CHECK(t->frames[1].force_N == Approx(8000));
        CHECK(t->frames[1].extension_mm == Approx(0.025));
        CHECK_THAT(t->notes.back(), Catch::Contains("strain column"));
    }
    SECTION("ksi and mm/mm from a units row") {
        const auto t = read_table("Time,Stress,Strain\ns,ksi,mm/mm\n0,0,0\n1,10,0.002\n", layout);
        REQUIRE(t);
        CHECK(t->frames[1].force_N == Approx(68.94757 * 80));
        CHECK(t->frames[1].extension_mm == Approx(0.1));
    }
    SECTION("a force column wins; a stress column beside it is not read") {
        const auto t = read_table("time_s,force_N,stress_furlongs,extension_mm\n0,5,x,0.1\n", layout);
        REQUIRE(t);
        CHECK(t->frames[0].force_N == 5);
    }
    SECTION("a strain without its unit is refused: a fraction and a percentage differ a hundredfold") {
        const auto bad = read_table("time_s,force_N,Strain\n0,5,0.1\n", layout);
        REQUIRE_FALSE(bad);
        CHECK_THAT(bad.error(), Catch::Contains("column 3 (strain) gives no unit") && Catch::Contains("mm/mm"));
    }
    SECTION("without the specimen there is no force from stress") {
        const auto bad = read_table("time_s,stress_MPa,extension_mm\n0,5,0.1\n");
        REQUIRE_FALSE(bad);
        CHECK_THAT(bad.error(), Catch::Contains("needs the cross-section S0"));
    }
}

TEST_CASE("lines of words after the last row end the table, and with rows after them they are an error") {
    const auto t = read_table("time_s,force_N\n0,1\n1,2\n\nSummary\nMaximum force,2,N\n");
    REQUIRE(t);
    CHECK(t->frames.size() == 2);
    CHECK_THAT(t->notes.back(), Catch::Contains("2 line(s) of words after the last row ignored"));

    const auto bad = read_table("time_s,force_N\n0,1\npaused\n1,2\n");
    REQUIRE_FALSE(bad);
    CHECK_THAT(bad.error(), Catch::Contains("line 3") && Catch::Contains("'paused'"));
}
