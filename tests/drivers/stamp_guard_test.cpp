// The stamp rules of the text formats (drivers/text_line_parser.hpp,
// drivers/wire-formats.md): a torn record's fragment glued to the next line
// must not pass as a record with a false stamp, and a device whose clock
// really jumps, or that pauses, must lose nothing.
#include <catch2/catch.hpp>

#include <string>

#include "parser_harness.hpp"

using namespace drv_test;
using tensile::ForceUnit;

namespace {

FormatConfig force_lines() {
    FormatConfig f;
    f.format = "lines";
    f.time_field = 0;
    f.channels = {channel("force", ForceUnit::newton, 1)};
    return f;
}

FormatConfig force_keyvalue() {
    FormatConfig f;
    f.format = "keyvalue";
    f.channels = {channel("force", ForceUnit::newton, -1, "F")};
    return f;
}

// Records stamped every 1000 µs from `from`, forces k.
std::string stamped_lines(std::uint64_t from, int count, int first_force = 0) {
    std::string s;
    for (int k = 0; k < count; ++k)
        s += std::to_string(from + 1000u * static_cast<unsigned>(k)) + "," + std::to_string(first_force + k) + " N\n";
    return s;
}

std::vector<std::uint64_t> stamps(const Run& r) {
    std::vector<std::uint64_t> v;
    for (const auto& s : r.samples) v.push_back(s.stamp);
    return v;
}

}  // namespace

TEST_CASE("stamp guard: a fragment glued before a whole line is rejected, not stamped falsely", "[stamps]") {
    // "1200" is what is left of a torn "12007000,7 N" line; the next whole
    // line "12008000,8 N" runs into it and would read as stamped 120012008000.
    const std::string stream = stamped_lines(12000000, 7) + "1200" + stamped_lines(12008000, 4, 8);
    const Run r = run_whole(force_lines(), stream);
    CHECK(r.counters.stream.bad_records == 1);
    CHECK(r.counters.stream.resync_bytes == std::string("120012008000,8 N").size());
    CHECK(r.counters.stream.records == 7 + 3);
    REQUIRE(r.samples.size() == 10);
    for (const auto s : stamps(r)) CHECK(s < 12012000u);  // no false stamp got through
    CHECK(r.samples[7].flags == flag::resynced);
    check_split_invariance(force_lines(), stream);
}

TEST_CASE("stamp guard: a device clock that really jumps loses no record", "[stamps]") {
    SECTION("forward") {
        const std::string stream = stamped_lines(5000000, 10) + stamped_lines(900000000, 5, 10);
        const Run r = run_whole(force_lines(), stream);
        CHECK(r.counters.stream.bad_records == 0);
        CHECK(r.samples.size() == 15);
        CHECK(r.samples[10].stamp == 900000000u);
    }
    SECTION("backward: the device restarted its clock") {
        const std::string stream = stamped_lines(5000000, 10) + stamped_lines(1000, 5, 10);
        const Run r = run_whole(force_lines(), stream);
        CHECK(r.counters.stream.bad_records == 0);
        CHECK(r.samples.size() == 15);
        CHECK(r.samples[10].stamp == 1000u);
    }
    SECTION("a pause in sending, then the same clock") {
        const std::string stream = stamped_lines(5000000, 10) + stamped_lines(5000000 + 60000000, 5, 10);
        const Run r = run_whole(force_lines(), stream);
        CHECK(r.counters.stream.bad_records == 0);
        CHECK(r.samples.size() == 15);
    }
    SECTION("a few lost records between two good ones are no leap") {
        const std::string stream = stamped_lines(5000000, 10) + stamped_lines(5000000 + 15000, 5, 15);
        const Run r = run_whole(force_lines(), stream);
        CHECK(r.counters.stream.bad_records == 0);
        CHECK(r.samples.size() == 15);
    }
}

TEST_CASE("stamp guard: in key=value, a stamped stream's record without a stamp is bad", "[stamps]") {
    // A torn "t=..." fragment "t" glued before "t=8000 F=8" makes "tt=8000", an unknown key.
    const std::string stream = "t=6000 F=6\nt=7000 F=7\ntt=8000 F=8\nt=9000 F=9\n";
    const Run r = run_whole(force_keyvalue(), stream);
    CHECK(r.counters.stream.bad_records == 1);
    CHECK(r.counters.stream.resync_bytes == std::string("tt=8000 F=8").size());
    REQUIRE(r.samples.size() == 3);
    CHECK(stamps(r) == std::vector<std::uint64_t>{6000, 7000, 9000});
    check_split_invariance(force_keyvalue(), stream);
}

TEST_CASE("stamp guard: in key=value, a record cut right after a key and glued to the next is bad", "[stamps]") {
    // Torn "t=7000 F=7" kept "t=7000 F"; the next line "t=8000 F=8" runs into
    // it: "t=7000 Ft=8000 F=8" has one stamp and a force, but "Ft" holds the
    // next stamp.
    const std::string stream = "t=4000 F=4\nt=5000 F=5\nt=6000 F=6\nt=7000 Ft=8000 F=8\nt=9000 F=9\n";
    const Run r = run_whole(force_keyvalue(), stream);
    CHECK(r.counters.stream.bad_records == 1);
    CHECK(stamps(r) == std::vector<std::uint64_t>{4000, 5000, 6000, 9000});
    // A device's own extra field ending in the stamp key is no glue.
    const Run extra = run_whole(force_keyvalue(), "t=5000 F=5 count=1\nt=6000 F=6 count=2\nt=7000 F=7 count=3\n");
    CHECK(extra.counters.stream.bad_records == 0);
    CHECK(extra.samples.size() == 3);
    check_split_invariance(force_keyvalue(), stream);
}
