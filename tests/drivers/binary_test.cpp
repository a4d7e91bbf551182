// Binary frame parser: frames built here byte by byte from the table in
// wire-formats.md, every split, and corrupted streams (garbage, bad CRC, bad
// length, seq gaps, overload) with exact counters.
#include <catch2/catch.hpp>

#include <climits>
#include <string>

#include "drivers/crc16.hpp"
#include "parser_harness.hpp"

using namespace drv_test;
using tensile::ForceUnit;
using tensile::LengthUnit;

namespace {

FormatConfig bin_channels() {
    FormatConfig f;
    f.format = "binary";
    f.channels = {channel("force", ForceUnit::newton), channel("extension", LengthUnit::millimetre),
                  channel("crosshead", LengthUnit::millimetre)};
    // The simulator's scales (wire-formats.md).
    f.channels[0].scale = 0.001;
    f.channels[1].scale = 0.0001;
    f.channels[2].scale = 0.0001;
    return f;
}

void put_le(std::string& s, std::uint64_t v, int bytes) {
    for (int i = 0; i < bytes; ++i) s.push_back(static_cast<char>((v >> (8 * i)) & 0xFF));
}

std::string frame(std::uint16_t seq, std::uint32_t time_us, std::vector<std::int32_t> counts) {
    std::string f = "\xA5\x5A";
    f.push_back(static_cast<char>(7 + 4 * counts.size()));
    put_le(f, seq, 2);
    put_le(f, time_us, 4);
    f.push_back(static_cast<char>(counts.size()));
    for (auto c : counts) put_le(f, static_cast<std::uint32_t>(c), 4);
    const auto crc = tensile::drivers::crc16_ccitt_false(
        {reinterpret_cast<const std::uint8_t*>(f.data()) + 2, f.size() - 2});
    f.push_back(static_cast<char>(crc >> 8));  // big-endian CRC
    f.push_back(static_cast<char>(crc & 0xFF));
    return f;
}

}  // namespace

TEST_CASE("binary: clean frames decode with scale, offset and wrap-around time", "[binary]") {
    FormatConfig cfg = bin_channels();
    cfg.channels[2].offset = -0.5;
    const std::string stream = frame(65534, 4294967000u, {1523420, 123, 12345}) +
                               frame(65535, 4294967295u, {-2000, 0, 0}) + frame(0, 704, {INT32_MIN, 7, 8});
    const Run r = run_whole(cfg, stream);
    REQUIRE(r.samples.size() == 9);
    CHECK(r.samples[0].value == Approx(1523.42).epsilon(1e-14));
    CHECK(r.samples[1].value == Approx(0.0123).epsilon(1e-14));
    CHECK(r.samples[2].value == Approx(1.2345 - 0.5).epsilon(1e-14));
    CHECK(r.samples[0].stamp == 4294967000u);
    CHECK(r.samples[3].value == Approx(-2.0).epsilon(1e-14));
    CHECK(r.samples[6].flags == flag::overload);  // INT32_MIN
    CHECK(std::isnan(r.samples[6].value));
    CHECK(r.samples[8].stamp == 704u);
    CHECK(r.counters.stream.lost_frames == 0);  // seq wrapped 65535 → 0
    CHECK(r.counters.stream.records == 3);
    CHECK(r.counters.channels[0] == ChannelCounters{2, 0, 1, 0});
}

TEST_CASE("binary: every split and byte-at-a-time give the same samples", "[binary][split]") {
    std::string stream;
    for (std::uint16_t i = 0; i < 6; ++i) stream += frame(i, 1000u * i, {i * 1000, -i, 0xA5A5});
    check_split_invariance(bin_channels(), stream);
}

TEST_CASE("binary: corrupted stream resyncs with exact counters", "[binary][corrupt]") {
    // Counts avoid the byte 0xA5 so no false sync hides inside the frames.
    const std::string f0 = frame(10, 100, {1, 2, 3});
    const std::string f1 = frame(11, 200, {4, 5, 6});
    std::string f2_bad = frame(12, 300, {7, 8, 9});
    f2_bad[12] ^= 0x01;  // one flipped bit in a count: the CRC no longer matches
    const std::string f3 = frame(13, 400, {10, 11, 12});
    std::string f4_len = frame(14, 500, {13, 14, 15});
    f4_len[2] = 7 + 4 * 2;  // length byte says two channels: not our layout
    const std::string f5 = frame(15, 600, {16, 17, 18});
    const std::string f8 = frame(18, 900, {19, 20, 21});  // 16, 17 never sent
    const std::string two_ch = frame(19, 1000, {1, 2});   // valid CRC, wrong n and L

    const std::string garbage("\x01\x02\xA5\x00\xA5\xA5", 6);  // lone and doubled sync bytes, a NUL
    const std::string stream = garbage + f0 + f1 + f2_bad + f3 + "\xA5" + f4_len + f5 + f8 + two_ch + frame(20, 1100, {1, 1, 1});
    const Run r = run_whole(bin_channels(), stream);
    const auto& s = r.counters.stream;
    CHECK(s.checksum_failures == 1);
    CHECK(s.resync_bytes == garbage.size() + f2_bad.size() + 1 + f4_len.size() + two_ch.size());
    CHECK(s.lost_frames == 1 /*12*/ + 1 /*14*/ + 2 /*16,17*/ + 1 /*19*/);
    CHECK(s.records == 6);
    REQUIRE(r.samples.size() == 18);
    CHECK(r.samples[0].flags == flag::resynced);
    CHECK(r.samples[3].flags == 0);
    CHECK(r.samples[6].flags == flag::resynced);  // f3, after the bad CRC
    CHECK(r.samples[6].value == Approx(0.010));
    CHECK(r.samples[9].flags == flag::resynced);  // f5, after the bad length
    check_split_invariance(bin_channels(), stream);
}

TEST_CASE("binary: a frame starting inside a corrupted one is found", "[binary][corrupt]") {
    const std::string good = frame(1, 1, {5, 5, 5});
    std::string cut = good.substr(0, 9);  // a frame torn after 9 bytes, then a whole one
    const Run r = run_whole(bin_channels(), cut + good);
    CHECK(r.samples.size() == 3);
    CHECK(r.counters.stream.resync_bytes == 9);
    CHECK(r.counters.stream.checksum_failures == 1);
}

TEST_CASE("binary: break_stream drops a partial frame and forgets seq", "[binary]") {
    const auto reg = builtin_formats();
    auto p = reg.make(bin_channels());
    std::vector<Sample> out;
    const std::string a = frame(1, 1, {1, 1, 1});
    p->feed(a + frame(2, 2, {2, 2, 2}).substr(0, 10), out);
    p->break_stream();
    p->feed(frame(500, 3, {3, 3, 3}), out);
    CHECK(out.size() == 6);
    CHECK(p->counters().stream.lost_frames == 0);
    CHECK(p->counters().stream.bad_records == 1);
    CHECK(p->counters().stream.resync_bytes == 10);
}

TEST_CASE("binary: trailing garbage counts the same however it is split", "[binary][corrupt]") {
    // Found by the fuzz target: a lone non-sync byte at the end of a read was
    // kept (and later counted as a torn frame) instead of being dropped at once.
    const std::string input("\xA5\x0F\x0F\x01\x00\x40\xE8\x03\x00\x00\x02\x20\x41\x17\x00\x7C", 16);
    FormatConfig cfg = bin_channels();
    cfg.channels.pop_back();
    check_split_invariance(cfg, input);
    const Run r = run_whole(cfg, input, true);
    CHECK(r.counters.stream.resync_bytes == 16);
    CHECK(r.counters.stream.bad_records == 0);
}
