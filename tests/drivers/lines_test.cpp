// Delimited-lines parser: reference stream, every split, corrupted streams
// with exact counters, separators, stamps and unit suffixes.
#include <catch2/catch.hpp>

#include <string>

#include "parser_harness.hpp"

using namespace drv_test;
using tensile::ForceUnit;
using tensile::LengthUnit;

namespace {

// The simulator's default layout: time in µs, force, extension, crosshead.
FormatConfig three_channels() {
    FormatConfig f;
    f.format = "lines";
    f.time_field = 0;
    f.channels = {channel("force", ForceUnit::newton, 1), channel("extension", LengthUnit::millimetre, 2),
                  channel("crosshead", LengthUnit::millimetre, 3)};
    return f;
}

const std::string reference =
    "#rig ready\r\n"
    "184233100,1523.42 N,0.01234 mm,1.2345 mm\n"
    "184234100,1.52442kN,12.35um,0.0486 in\r\n"
    "184235100,OVER,0.01236,1.2347\r"
    "184236100,nan,----,1.2348 mm\n"
    "\n"
    "184237100, 100 lbf ,0.01237 mm,1.2349 mm\r\n"
    "#ok hold\n"
    "184238100,10kgf,0.01238 mm,1.2350 mm\n";

}  // namespace

TEST_CASE("lines: reference stream gives the expected samples", "[lines]") {
    const Run r = run_whole(three_channels(), reference);
    REQUIRE(r.samples.size() == 17);
    CHECK(r.messages == std::vector<std::string>{"#rig ready", "#ok hold"});

    CHECK(r.samples[0].value == 1523.42);
    CHECK(r.samples[0].stamp == 184233100u);
    CHECK(r.samples[0].stamp_kind == Stamp::device_us);
    CHECK(r.samples[0].flags == 0);
    CHECK(r.samples[2].channel == 2);
    CHECK(r.samples[2].quantity == Quantity::length);

    CHECK(r.samples[3].value == Approx(1524.42).epsilon(1e-12));  // kN → N
    CHECK(r.samples[4].value == Approx(0.01235).epsilon(1e-12));  // µm → mm
    CHECK(r.samples[5].value == Approx(0.0486 * 25.4).epsilon(1e-12));  // NIST SP 811: 1 in = 25.4 mm exactly

    // OVER: a flagged sample without a value; bare numbers take the channel's unit.
    CHECK(r.samples[6].channel == 0);
    CHECK((r.samples[6].flags & flag::overload) != 0);
    CHECK(std::isnan(r.samples[6].value));
    CHECK(r.samples[7].value == 0.01236);

    // nan is counted and skipped: the next record has only extension (----) and crosshead.
    CHECK(r.samples[9].channel == 1);
    CHECK((r.samples[9].flags & flag::overload) != 0);
    CHECK(r.samples[10].value == 1.2348);

    CHECK(r.samples[11].value == Approx(444.82216152605).epsilon(1e-14));  // NIST SP 811: 1 lbf = 4.4482216152605 N
    CHECK(r.samples[14].value == Approx(98.0665).epsilon(1e-14));          // NIST SP 811: 1 kgf = 9.80665 N

    const auto& s = r.counters.stream;
    CHECK(s.records == 6);
    CHECK(s.device_messages == 2);
    CHECK(s.bad_records == 0);
    CHECK(s.resync_bytes == 0);
    CHECK(s.bytes == reference.size());
    CHECK(r.counters.channels[0] == ChannelCounters{4, 1, 1, 0});
    CHECK(r.counters.channels[1] == ChannelCounters{5, 0, 1, 0});
    CHECK(r.counters.channels[2] == ChannelCounters{6, 0, 0, 0});
}

TEST_CASE("lines: every split and byte-at-a-time give the same samples", "[lines][split]") {
    check_split_invariance(three_channels(), reference);
}

TEST_CASE("lines: corrupted stream resyncs with exact counters", "[lines][corrupt]") {
    const std::string long_line(600, 'A');
    const std::string good = "184233200,1523.42 N,0.01 mm,1.2 mm\n";
    const std::string stream = std::string("garbage\x01\x02\n") +        // 1 field: bad, 9 bytes
                               "184233100,1523.42 N,0.01 mm\n" +           // torn: 3 fields, 27 bytes
                               good +                                      // good, flagged resynced
                               "184233300,15x3.42 N,0.01 mm,1.2 mm\n" +    // bad number, 34 bytes
                               "184233400,1523.42 furlong,0.01 mm,1.2 mm\n" +  // unknown unit, 40 bytes
                               "1842334x0,1523.42 N,0.01 mm,1.2 mm\n" +    // bad stamp, 34 bytes
                               long_line + "\n" +                          // over max_line: 600 bytes
                               good + good +                               // first resynced, second clean
                               "184233900,inf,0.01 mm,1.2 mm\n" +          // infinite force: out of range
                               "184234100,1 N,6 mm,1 mm\n" +               // extension above its max
                               "184234000,1523";                           // torn by the end of the stream
    FormatConfig cfg = three_channels();
    cfg.channels[1].max = 5.0;

    const Run r = run_whole(cfg, stream, /*break_at_end=*/true);
    const auto& s = r.counters.stream;
    CHECK(s.bad_records == 6);
    CHECK(s.long_lines == 1);
    CHECK(s.resync_bytes == 9 + 27 + 34 + 40 + 34 + 600 + 14);
    CHECK(s.records == 5);
    REQUIRE(r.samples.size() == 15);
    CHECK((r.samples[0].flags & flag::resynced) != 0);
    CHECK((r.samples[2].flags & flag::resynced) != 0);
    CHECK((r.samples[3].flags & flag::resynced) != 0);  // first good line after the long line
    CHECK(r.samples[6].flags == 0);
    CHECK(r.samples[9].flags == flag::overload);  // inf
    CHECK(r.samples[13].flags == flag::overload);  // 6 mm > max
    CHECK(r.counters.channels[0] == ChannelCounters{4, 0, 0, 1});
    CHECK(r.counters.channels[1] == ChannelCounters{4, 0, 0, 1});
    CHECK(r.counters.channels[2] == ChannelCounters{5, 0, 0, 0});

    check_split_invariance(cfg, stream);
}

TEST_CASE("lines: one sign at most before a reading", "[lines][corrupt]") {
    // C's strtod grammar (and from_chars, less the '+'): one optional sign.
    const std::string stream = "184233200,+1523.42 N,0.01 mm,1.2 mm\n"
                               "184233300,+-1523.42 N,0.01 mm,1.2 mm\n"
                               "184233400,-+1523.42 N,0.01 mm,1.2 mm\n"
                               "184233500,1523.42 N,-0.01 mm,1.2 mm\n";
    const Run r = run_whole(three_channels(), stream, /*break_at_end=*/false);
    CHECK(r.counters.stream.bad_records == 2);
    CHECK(r.counters.stream.records == 2);
    REQUIRE(r.samples.size() == 6);
    CHECK(r.samples[0].value == 1523.42);
    CHECK(r.samples[4].value == -0.01);
}

TEST_CASE("lines: break_stream drops a partial line as torn", "[lines][corrupt]") {
    const std::string stream = "184233100,1523.42 N,0.01 mm,1.2 mm\n184234000,15";
    const Run r = run_whole(three_channels(), stream, /*break_at_end=*/true);
    CHECK(r.samples.size() == 3);
    CHECK(r.counters.stream.bad_records == 1);
    CHECK(r.counters.stream.resync_bytes == 12);
}

TEST_CASE("lines: glued torn line is rejected by the field count", "[lines][corrupt]") {
    // The end of one line was lost on the wire; the rest of the next line follows.
    const Run r = run_whole(three_channels(), "184233100,1523.42 N,0.0184233200,1523.42 N,0.01 mm,1.2 mm\n");
    CHECK(r.samples.empty());
    CHECK(r.counters.stream.bad_records == 1);
}

TEST_CASE("lines: out-of-range reading is flagged and counted", "[lines]") {
    FormatConfig cfg = three_channels();
    cfg.channels[1].max = 5.0;
    const Run r = run_whole(cfg, "1,1 N,6 mm,1 mm\n");
    REQUIRE(r.samples.size() == 3);
    CHECK((r.samples[1].flags & flag::overload) != 0);
    CHECK(std::isnan(r.samples[1].value));
    CHECK(r.counters.channels[1].out_of_range == 1);
    CHECK(r.counters.channels[1].good == 0);
}

TEST_CASE("lines: exactly max_line is accepted, one more byte is not", "[lines][corrupt]") {
    FormatConfig cfg = three_channels();
    const std::string line = "184233100,1523.42 N,0.01 mm,1.2 mm";
    cfg.max_line = line.size();
    CHECK(run_whole(cfg, line + "\n").samples.size() == 3);
    const Run r = run_whole(cfg, line + " \n");
    CHECK(r.samples.empty());
    CHECK(r.counters.stream.long_lines == 1);
    CHECK(r.counters.stream.resync_bytes == line.size() + 1);
    // A stream that never ends a line holds at most max_line bytes and is counted once it ends.
    const std::string endless(100000, '7');
    CHECK(run_pieces(cfg, endless + "\n" + line + "\n", {5000, 50000}).counters.stream.long_lines == 1);
}

TEST_CASE("lines: calibration scale and offset", "[lines]") {
    FormatConfig cfg = three_channels();
    cfg.channels[0].scale = 1.002;
    cfg.channels[0].offset = -3.0;
    const Run r = run_whole(cfg, "1,2 kN,0,0\n");
    CHECK(r.samples[0].value == Approx(2000.0 * 1.002 - 3.0).epsilon(1e-14));
}

TEST_CASE("lines: separators, counter stamps and no stamp", "[lines]") {
    SECTION("semicolon, counter field") {
        FormatConfig cfg;
        cfg.separator = ';';
        cfg.counter_field = 2;
        cfg.nominal_rate_hz = 1000;
        cfg.channels = {channel("force", ForceUnit::kilonewton, 0), channel("extension", LengthUnit::millimetre, 1)};
        const Run r = run_whole(cfg, "1.5;0.2 mm;17\n");
        REQUIRE(r.samples.size() == 2);
        CHECK(r.samples[0].value == 1500.0);
        CHECK(r.samples[0].stamp_kind == Stamp::counter);
        CHECK(r.samples[0].stamp == 17u);
        check_split_invariance(cfg, "1.5;0.2 mm;17\r\n1.6;0.3 mm;18\r\n#hi\r\n1.7 ; 0.4 ; 19\r\n");
    }
    SECTION("space separated with detached unit words") {
        FormatConfig cfg = three_channels();
        cfg.separator = ' ';
        const Run r = run_whole(cfg, "100  1523.42 N 0.01 mm  OVER\n200 1 kN 2 3\n");
        REQUIRE(r.samples.size() == 6);
        CHECK(r.samples[0].value == 1523.42);
        CHECK((r.samples[2].flags & flag::overload) != 0);
        CHECK(r.samples[3].value == 1000.0);
        check_split_invariance(cfg, "100  1523.42 N 0.01 mm  OVER\n200 1 kN 2 3\n");
    }
    SECTION("tab separated, no stamp") {
        FormatConfig cfg;
        cfg.separator = '\t';
        cfg.channels = {channel("force", ForceUnit::newton, 0)};
        const Run r = run_whole(cfg, "12.5 N\n13\n");
        REQUIRE(r.samples.size() == 2);
        CHECK(r.samples[1].stamp_kind == Stamp::none);
    }
    SECTION("keep_nan emits flagged samples") {
        FormatConfig cfg = three_channels();
        cfg.keep_nan = true;
        const Run r = run_whole(cfg, "1,nan,NaN,-nan\n");
        REQUIRE(r.samples.size() == 3);
        for (const auto& s : r.samples) CHECK((s.flags & flag::nan) != 0);
        CHECK(r.counters.channels[2].nan == 1);
    }
}

// Instruments that stamp in seconds or milliseconds with decimals: the same
// instants as the µs stream, kept in whole µs (1 s = 10^6 µs, SI).
TEST_CASE("lines: device time in seconds or milliseconds reads to the same µs stamps", "[lines]") {
    FormatConfig us = three_channels();
    const std::string in_us = "184233100,1523.42 N,0.01234 mm,1.2345 mm\n184234100,1524.01 N,0.01235 mm,1.2346 mm\n";
    FormatConfig s = us;
    s.time_us_per_unit = 1e6;
    const std::string in_s = "184.2331,1523.42 N,0.01234 mm,1.2345 mm\n184.2341,1524.01 N,0.01235 mm,1.2346 mm\n";
    FormatConfig ms = us;
    ms.time_us_per_unit = 1e3;
    const std::string in_ms = "184233.1,1523.42 N,0.01234 mm,1.2345 mm\n184234.1,1524.01 N,0.01235 mm,1.2346 mm\n";
    const Run a = run_whole(us, in_us), b = run_whole(s, in_s), c = run_whole(ms, in_ms);
    REQUIRE(a.samples.size() == 6);
    REQUIRE(b.samples.size() == 6);
    REQUIRE(c.samples.size() == 6);
    for (std::size_t i = 0; i < 6; ++i) {
        CHECK(b.samples[i].stamp == a.samples[i].stamp);
        CHECK(c.samples[i].stamp == a.samples[i].stamp);
        CHECK(b.samples[i].stamp_kind == Stamp::device_us);
    }
    check_split_invariance(s, in_s);
    // A signed, spelled or exponent time is no stamp: the record is bad.
    const Run bad = run_whole(s, "-1.5,1 N,1 mm,1 mm\nnan,1 N,1 mm,1 mm\n1e3,1 N,1 mm,1 mm\n");
    CHECK(bad.samples.empty());
    CHECK(bad.counters.stream.bad_records == 3);
}

// Decimal commas (common practice on European indicators, from memory):
// "1523,4" is 1523.4 when the config says so and the separator is not ','.
TEST_CASE("lines: decimal commas with a semicolon separator", "[lines]") {
    FormatConfig cfg = three_channels();
    cfg.separator = ';';
    cfg.decimal_comma = true;
    const std::string in = "184233100;1523,42 N;0,01234 mm;1,2345\n184234100;1,52442 kN;12,35um;-0,5\n";
    const Run r = run_whole(cfg, in);
    REQUIRE(r.samples.size() == 6);
    CHECK(r.samples[0].value == 1523.42);
    CHECK(r.samples[1].value == 0.01234);
    CHECK(r.samples[3].value == Approx(1524.42).epsilon(1e-12));  // kN → N
    CHECK(r.samples[5].value == -0.5);
    check_split_invariance(cfg, in);
    // Two commas in one number is no number; without the setting a comma is refused.
    CHECK(run_whole(cfg, "1;1,2,3;1;1\n").counters.stream.bad_records == 1);
    cfg.decimal_comma = false;
    CHECK(run_whole(cfg, in).samples.empty());
    // With ',' as the separator a decimal comma cannot be told from it.
    FormatConfig clash = three_channels();
    clash.decimal_comma = true;
    CHECK_THROWS_WITH(builtin_formats().make(clash), Catch::Contains("decimal_comma needs a separator other than ','"));
}

TEST_CASE("lines: bad configuration is refused at start-up", "[lines][config]") {
    const auto reg = builtin_formats();
    FormatConfig cfg = three_channels();
    cfg.channels[0].field = -1;
    CHECK_THROWS_WITH(reg.make(cfg), Catch::Contains("field of channel force"));
    cfg = three_channels();
    cfg.counter_field = 4;
    CHECK_THROWS_WITH(reg.make(cfg), Catch::Contains("not both"));
    cfg.format = "morse";
    CHECK_THROWS_WITH(reg.make(cfg), Catch::Contains("expected one of: binary, control, keyvalue, lines"));
}
