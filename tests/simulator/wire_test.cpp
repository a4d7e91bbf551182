// Wire formats against drivers/wire-formats.md, the CRC against its published
// check value, commands and fault specs.
#include <catch2/catch.hpp>

#include <algorithm>
#include <climits>
#include <cmath>
#include <cstring>

#include "commands.hpp"
#include "crc16.hpp"
#include "encoders.hpp"
#include "faults.hpp"
#include "links.hpp"

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

// wire-formats.md, "Channels on separate connections": a link carries only its
// own channels, e.g. `184233100,1523.42 N` in `lines`, n = 1 in `binary`.
TEST_CASE("a link with one channel writes only that channel") {
    const Sample s = sample_of(184233100, 1523420, 123, 12345);
    std::string out;
    Encoder(Format::lines, "\n", channel_bit(ChannelId::force)).append(out, s);
    CHECK(out == "184233100,1523.420 N\n");
    out.clear();
    Encoder(Format::keyvalue, "\n", channel_bit(ChannelId::extension) | channel_bit(ChannelId::crosshead)).append(out, s);
    CHECK(out == "t=184233100 ext=0.0123 xh=1.2345\n");
    out.clear();
    Encoder(Format::binary, "\n", channel_bit(ChannelId::extension)).append(out, s);
    REQUIRE(out.size() == 2 + 1 + 7 + 4 + 2);
    CHECK(static_cast<unsigned char>(out[2]) == 11);  // L = 7 + 4·n with n = 1
    CHECK(out[9] == 1);                                 // n
    std::int32_t count = 0;
    std::memcpy(&count, out.data() + 10, 4);            // little-endian on this host, as on the wire
    CHECK(count == 123);
}

TEST_CASE("link specs parse, and bad ones say what was expected") {
    const auto l = parse_link("force,crosshead@1000=tcp:127.0.0.1:7701");
    REQUIRE(l);
    CHECK(l->channels == (channel_bit(ChannelId::force) | channel_bit(ChannelId::crosshead)));
    CHECK(l->rate_hz == 1000);
    CHECK(l->target == LinkTarget::tcp);
    CHECK(l->where == "127.0.0.1:7701");
    CHECK(channel_names(l->channels) == "force,crosshead");
    const auto p = parse_link("extension=pty");
    REQUIRE(p);
    CHECK(p->rate_hz == 0);  // the run's rate
    CHECK(p->target == LinkTarget::pty);
    CHECK(parse_link("force").error() == "--link 'force' has no '=TARGET'; expected CHANNELS[@RATE]=TARGET, e.g. "
                                         "force@1000=tcp:127.0.0.1:7701, extension@500=pty or crosshead=file:xh.txt");
    CHECK(parse_link("strain=pty").error() == "--link 'strain=pty': channel 'strain'; expected force, extension or crosshead");
    CHECK(parse_link("force@fast=pty").error() == "--link 'force@fast=pty': rate 'fast' must be samples per second from 1 to 1000000");
    CHECK(parse_link("force=serial").error() == "--link 'force=serial': target 'serial'; expected pty, tcp:HOST:PORT or file:PATH");
    CHECK(parse_link("force,force=pty").error() == "--link 'force,force=pty': channel 'force' named twice");
    CHECK(check_links({*parse_link("force=pty"), *parse_link("force,extension=pty")}).value_or("").find("already on another link") !=
          std::string::npos);
    CHECK(check_links({*parse_link("extension=pty")}).value_or("").find("no link carries force") != std::string::npos);
    CHECK_FALSE(check_links({*parse_link("force=pty"), *parse_link("extension=pty")}));
}

TEST_CASE("link clocks: the first keeps time, the others start later and drift within a quartz's tolerance") {
    CHECK(clock_for(3, 0).offset_s == 0);
    CHECK(clock_for(3, 0).drift == 0);
    CHECK(clock_for(3, 0).at(12.5) == 12.5);
    for (std::uint64_t seed : {1u, 2u, 99u})
        for (std::size_t k : {1u, 2u, 5u}) {
            const DeviceClock c = clock_for(seed, k);
            CHECK(c.offset_s >= 1);
            CHECK(c.offset_s <= 60);
            CHECK(std::abs(c.drift) <= 50e-6);  // ±50 ppm (common practice for plain crystals, from memory)
            CHECK(c.at(100) == Approx(100 * (1 + c.drift) + c.offset_s));
        }
    CHECK(clock_for(3, 1).offset_s != clock_for(3, 2).offset_s);
}

// A torn record has lost its line end, so a reader sees each run of torn
// records glued to the next whole record (wire-formats.md: a line ends at LF,
// CR or CRLF). The truth counts runs, fragment bytes and the glued record's bytes.
TEST_CASE("torn records: runs, fragments and the record each run runs into are counted") {
    FaultPlan plan({*parse_fault("torn@0+0.003:1")}, 4, 1000);  // every record at 0, 1 and 2 ms
    std::string wire;
    std::size_t fragments = 0;
    for (int k = 0; k < 5; ++k) {
        const std::size_t start = wire.size();
        wire += "1234,5.678 N\n";  // 13 bytes
        plan.after_record(wire, start, k / 1000.0);
        if (k < 3) fragments += wire.size() - start;
    }
    const Fault& f = plan.faults()[0];
    CHECK(f.records_affected == 3);
    CHECK(f.torn_runs == 1);
    CHECK(f.fragment_bytes == fragments);
    CHECK(f.glued_bytes == 13);  // only the first whole record after the run
    CHECK(std::count(wire.begin(), wire.end(), '\n') == 2);
}
