// Wire formats against drivers/wire-formats.md, the CRC against its published
// check value, commands and fault specs.
#include <catch2/catch.hpp>

#include <climits>
#include <cstring>

#include "commands.hpp"
#include "crc16.hpp"
#include "encoders.hpp"
#include "faults.hpp"

using namespace tensile::sim;

namespace {
const unsigned char* bytes(const std::string& s) { return reinterpret_cast<const unsigned char*>(s.data()); }
Sample sample_of(std::uint64_t t_us, std::int64_t f, std::int64_t x, std::int64_t h) {
    Sample s;
    s.device_time_us = t_us;
    s.force.counts = f;
    s.extension.counts = x;
    s.crosshead.counts = h;
    return s;
}
}  // namespace

TEST_CASE("CRC-16/CCITT-FALSE check value") {
    // CRC-16/CCITT-FALSE (REFERENCES.md, published CRC catalogue): "123456789" gives 0x29B1.
    const std::string check = "123456789";
    CHECK(crc16_ccitt_false(bytes(check), check.size()) == 0x29B1);
}

TEST_CASE("binary frame layout as wire-formats.md fixes it") {
    std::string out;
    const std::int32_t counts[3] = {1523420, -5, INT32_MIN};
    append_binary_frame(out, 0x1234, 0xA1B2C3D4, counts, 3);
    REQUIRE(out.size() == 2 + 1 + 2 + 4 + 1 + 12 + 2);
    const auto* b = bytes(out);
    CHECK(b[0] == 0xA5);
    CHECK(b[1] == 0x5A);
    CHECK(b[2] == 7 + 4 * 3);                       // L: bytes from seq to the last count
    CHECK((b[3] | b[4] << 8) == 0x1234);            // seq, little-endian
    CHECK(b[5] == 0xD4);                            // device time, little-endian
    CHECK(b[8] == 0xA1);
    CHECK(b[9] == 3);                               // channel count
    std::int32_t c0, c1, c2;
    std::memcpy(&c0, b + 10, 4);
    std::memcpy(&c1, b + 14, 4);
    std::memcpy(&c2, b + 18, 4);
    CHECK(c0 == 1523420);
    CHECK(c1 == -5);
    CHECK(c2 == INT32_MIN);                         // overload marker
    const std::uint16_t crc = crc16_ccitt_false(b + 2, 1 + 19);  // from L to the last count
    CHECK(b[22] == (crc >> 8));                     // CRC big-endian
    CHECK(b[23] == (crc & 0xFF));
}

TEST_CASE("binary encoder: seq counts up and wraps, flags become the overload count") {
    Encoder e(Format::binary);
    std::string out;
    Sample s = sample_of(5, 1, 2, 3);
    s.extension.kind = Reading::absent;
    for (int i = 0; i < 65537; ++i) e.append(out, s);
    const auto* last = bytes(out) + out.size() - 24;
    CHECK((last[3] | last[4] << 8) == 0);  // 65536 mod 2^16
    std::int32_t x;
    std::memcpy(&x, last + 14, 4);
    CHECK(x == INT32_MIN);
}

TEST_CASE("table: exact header and fixed decimals") {
    Encoder e(Format::table);
    std::string out;
    e.begin(out);
    Sample s = sample_of(1500001, 12500, -3, 12345);
    s.extension.kind = Reading::absent;
    e.append(out, s);
    CHECK(out == "time_s,force_N,extension_mm,crosshead_mm\n1.500001,12.500,,1.2345\n");
}

TEST_CASE("lines and keyvalue records, device messages between them") {
    Encoder lines(Format::lines, "\r\n");
    std::string out;
    lines.append(out, sample_of(184233100, 1523420, 123, 12345));
    lines.message(out, "#ok hold");
    Sample over = sample_of(184234100, 0, 0, 12346);
    over.force.kind = Reading::over;
    over.extension.kind = Reading::nan;
    lines.append(out, over);
    CHECK(out == "184233100,1523.420 N,0.0123 mm,1.2345 mm\r\n#ok hold\r\n184234100,OVER,nan,1.2346 mm\r\n");

    Encoder kv(Format::keyvalue);
    out.clear();
    Sample gone = sample_of(7, -250, 0, -1);
    gone.extension.kind = Reading::absent;
    kv.append(out, gone);
    CHECK(out == "t=7 F=-0.250 ext=---- xh=-0.0001\n");
    Encoder bin(Format::binary);
    out.clear();
    bin.message(out, "#ok hold");
    CHECK(out.empty());  // binary streams carry no text
}

TEST_CASE("commands: answered #ok or #error as wire-formats.md says") {
    CHECK(parse_command("hold").answer == "#ok hold");
    CHECK(parse_command("extensometer-off\r").answer == "#ok extensometer-off");
    CHECK(*parse_command(" ping ").command == Command::ping);
    const ParsedCommand bad = parse_command("jump");
    CHECK_FALSE(bad.command);
    CHECK_THAT(bad.answer, Catch::StartsWith("#error ") && Catch::Contains("'jump'"));
    CommandReader r;
    CHECK(r.feed("ho").empty());
    const auto lines = r.feed("ld\nresume\nst");
    REQUIRE(lines.size() == 2);
    CHECK(lines[0] == "hold");
    CHECK(lines[1] == "resume");
    CHECK_FALSE(parse_command(r.feed(std::string(1000, 'x') + "\n").at(0)).command);
}

TEST_CASE("fault specs parse, and bad ones say what was expected") {
    auto g = parse_fault("garbage@12+2:500");
    REQUIRE(g.ok());
    CHECK(g->kind == FaultKind::garbage);
    CHECK(g->start_s == 12);
    CHECK(g->duration_s == 2);
    CHECK(g->amount == 500);
    auto s = parse_fault("sensor-stop@3+1:crosshead");
    REQUIRE(s.ok());
    CHECK(s->channel == ChannelId::crosshead);
    auto j = parse_fault("clock-jump@5:-2.5");
    REQUIRE(j.ok());
    CHECK(j->amount == -2.5);
    CHECK_THAT(parse_fault("garbage12").error(), Catch::Contains("expected KIND@START"));
    CHECK_THAT(parse_fault("smoke@1").error(), Catch::Contains("unknown kind 'smoke'"));
    CHECK_THAT(parse_fault("nan@1:torque").error(), Catch::Contains("expected force, extension or crosshead"));
    CHECK_THAT(parse_fault("torn@1:2").error(), Catch::Contains("(0, 1]"));
}

TEST_CASE("faults change samples and bytes only inside their window") {
    std::vector<Fault> list{*parse_fault("nan@1+1"), *parse_fault("sensor-stop@1+1:crosshead"), *parse_fault("clock-jump@1.5:2"),
                            *parse_fault("garbage@1+1:2000"), *parse_fault("torn@1+1:1")};
    FaultPlan plan(list, 9, 1000);
    Sample a = sample_of(500000, 10, 20, 30);
    plan.apply(a, 0.5);
    CHECK(a.force.kind == Reading::value);
    Sample b = sample_of(1600000, 11, 21, 31);
    plan.apply(b, 1.6);
    CHECK(b.force.kind == Reading::nan);
    CHECK(b.crosshead.counts == 30);  // frozen at its last value
    CHECK(b.device_time_us == 3600000);
    std::string out = "record,line\n";
    plan.after_record(out, 0, 1.6);
    CHECK(out.find("line\n") == std::string::npos);  // torn: the line end is gone
    CHECK(out.size() <= 10 + 2);
    CHECK(plan.faults()[3].bytes_injected == 2);
}
