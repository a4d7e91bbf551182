// key=value parser: reference stream, every split, corrupted lines with exact
// counters, unknown keys and missing channels.
#include <catch2/catch.hpp>

#include <string>

#include "parser_harness.hpp"

using namespace drv_test;
using tensile::ForceUnit;
using tensile::LengthUnit;

namespace {

FormatConfig kv_channels() {
    FormatConfig f;
    f.format = "keyvalue";
    f.channels = {channel("force", ForceUnit::newton, -1, "F"), channel("extension", LengthUnit::millimetre, -1, "ext"),
                  channel("crosshead", LengthUnit::millimetre, -1, "xh")};
    return f;
}

const std::string reference =
    "t=184233100 F=1523.42 ext=0.01234 xh=1.2345\n"
    "t=184234100,F=1.5 kN,ext=12 um,xh=0.05 in,temp=21.5 C\r\n"
    "#ok ping\r"
    "xh=1.3 t=184235100 F=OVER\n"
    "t=184236100 F=nan ext=---- xh=1.4mm volt=3\n";

}  // namespace

TEST_CASE("keyvalue: reference stream gives the expected samples", "[keyvalue]") {
    const Run r = run_whole(kv_channels(), reference);
    REQUIRE(r.samples.size() == 3 + 3 + 2 + 2);
    CHECK(r.messages == std::vector<std::string>{"#ok ping"});
    CHECK(r.samples[0].value == 1523.42);
    CHECK(r.samples[0].stamp == 184233100u);
    CHECK(r.samples[3].value == 1500.0);
    CHECK(r.samples[4].value == Approx(0.012).epsilon(1e-12));
    CHECK(r.samples[5].value == Approx(0.05 * 25.4).epsilon(1e-12));  // NIST SP 811: 1 in = 25.4 mm exactly
    // Channel order in the output follows the config, not the line.
    CHECK(r.samples[6].channel == 0);
    CHECK(r.samples[6].flags == flag::overload);
    CHECK(r.samples[7].channel == 2);
    CHECK(r.samples[7].value == 1.3);
    CHECK(r.samples[8].channel == 1);
    CHECK(r.samples[8].flags == flag::overload);
    CHECK(r.samples[9].value == 1.4);

    CHECK(r.counters.stream.records == 4);
    CHECK(r.counters.stream.unknown_keys == 2);
    CHECK(r.counters.stream.bad_records == 0);
    CHECK(r.counters.channels[0] == ChannelCounters{2, 1, 1, 0});
    CHECK(r.counters.channels[1] == ChannelCounters{2, 0, 1, 0});
    CHECK(r.counters.channels[2] == ChannelCounters{4, 0, 0, 0});
}

TEST_CASE("keyvalue: every split and byte-at-a-time give the same samples", "[keyvalue][split]") {
    check_split_invariance(kv_channels(), reference);
}

TEST_CASE("keyvalue: corrupted lines resync with exact counters", "[keyvalue][corrupt]") {
    const std::string good = "t=5 F=1 ext=2 xh=3\n";  // 18 bytes + LF
    const std::string stream = std::string("junk words\n") +  // no pair: 10 bytes
                               "t=1 F\n" +                     // suffix glued to the stamp: bad stamp, 5
                               "F=1 F=2\n" +                   // repeated key, 7
                               "t=2 =4 xh=1\n" +               // empty key, 11
                               "t=3 F= xh=1\n" +               // empty value, 11
                               "t=4 F=1,N\n" +                 // unit after a comma, 9
                               "t=4 F=1 parsec\n" +            // unknown unit, 14
                               good +                          // resynced
                               "F=1 x=2 y=3\n" +               // no stamp in a stamped stream: bad, 11
                               "q=1\n" +                       // the same, 3
                               "t=6 ext=7 F=1\r\n" + std::string(700, 'k') + "\n" + good;
    const Run r = run_whole(kv_channels(), stream);
    const auto& s = r.counters.stream;
    CHECK(s.bad_records == 9);
    CHECK(s.long_lines == 1);
    CHECK(s.resync_bytes == 10 + 5 + 7 + 11 + 11 + 9 + 14 + 11 + 3 + 700);
    CHECK(s.unknown_keys == 3);  // seen on the wire, though their lines were refused
    CHECK(s.records == 3);
    REQUIRE(r.samples.size() == 3 + 2 + 3);
    CHECK(r.samples[0].flags == flag::resynced);
    CHECK(r.samples[3].flags == flag::resynced);  // after the unstamped lines
    CHECK(r.samples[3].stamp == 6u);
    CHECK(r.samples[5].flags == flag::resynced);  // after the long line
    check_split_invariance(kv_channels(), stream);
}

TEST_CASE("keyvalue: a stream that never stamps takes every record unstamped", "[keyvalue]") {
    const std::string stream = "F=1 x=2 y=3\nq=1\next=7 F=2\n";
    const Run r = run_whole(kv_channels(), stream);
    const auto& s = r.counters.stream;
    CHECK(s.bad_records == 0);
    CHECK(s.unknown_keys == 3);
    CHECK(s.records == 3);  // "q=1": only unknown keys, counted, not bad
    REQUIRE(r.samples.size() == 1 + 2);
    CHECK(r.samples[0].stamp_kind == Stamp::none);
    CHECK(r.samples[0].flags == 0);
}

TEST_CASE("keyvalue: counter key stamps samples as a counter", "[keyvalue]") {
    FormatConfig cfg = kv_channels();
    cfg.counter_key = "n";
    cfg.nominal_rate_hz = 500;
    const Run r = run_whole(cfg, "n=42 F=3\n");
    REQUIRE(r.samples.size() == 1);
    CHECK(r.samples[0].stamp_kind == Stamp::counter);
    CHECK(r.samples[0].stamp == 42u);
}

TEST_CASE("keyvalue: device time in seconds reads to whole µs stamps", "[keyvalue]") {
    FormatConfig cfg = kv_channels();
    cfg.time_us_per_unit = 1e6;
    const std::string in = "t=184.2331 F=1523.42 ext=0.01234 xh=1.2345\nt=184.234100 F=1524 ext=0.01235 xh=1.2346\n";
    const Run r = run_whole(cfg, in);
    REQUIRE(r.samples.size() == 6);
    CHECK(r.samples[0].stamp == 184233100u);  // 1 s = 10^6 µs
    CHECK(r.samples[3].stamp == 184234100u);
    check_split_invariance(cfg, in);
}

TEST_CASE("keyvalue: bad configuration is refused at start-up", "[keyvalue][config]") {
    const auto reg = builtin_formats();
    FormatConfig cfg = kv_channels();
    cfg.channels[1].key = "F";
    CHECK_THROWS_WITH(reg.make(cfg), Catch::Contains("key F is used by two channels"));
    cfg = kv_channels();
    cfg.channels[0].key = "t";
    CHECK_THROWS_WITH(reg.make(cfg), Catch::Contains("also the time"));
}
