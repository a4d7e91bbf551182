// Source → parser → time base, over the replay source (any parser runs over
// any source): the samples come out stamped, the fault summary names what
// went wrong since the last report.
#include <catch2/catch.hpp>

#include <filesystem>

#include <boost/asio/io_context.hpp>

#include "drivers/acquisition.hpp"
#include "drivers/parser_registry.hpp"
#include "drivers/replay_source.hpp"

using namespace tensile::drivers;

namespace {
FormatConfig kv() {
    FormatConfig f;
    f.format = "keyvalue";
    ChannelSpec c;
    c.name = "force";
    c.key = "F";
    f.channels = {c};
    return f;
}
}  // namespace

TEST_CASE("acquisition: replayed capture comes out as stamped samples", "[acquisition]") {
    const auto path = (std::filesystem::temp_directory_path() / ("tensiled-acq-" + std::to_string(::getpid()) + ".cap")).string();
    {
        CaptureWriter w;
        REQUIRE_FALSE(w.open(path));
        const std::string a = "t=1000000 F=1\nt=1001000 F=2\nt=10", b = "02000 F=3\n#ok ping\njunk\n";
        REQUIRE_FALSE(w.write(std::as_bytes(std::span<const char>(a.data(), a.size())), 0.010));
        REQUIRE_FALSE(w.write(std::as_bytes(std::span<const char>(b.data(), b.size())), 0.012));
    }
    boost::asio::io_context io;
    ReplaySourceConfig rc;
    rc.name = "rec";
    rc.path = path;
    rc.time_origin_s = 50.0;
    Acquisition acq(ReplaySource::create(io, rc), builtin_formats().make(kv()), TimeBaseConfig{.latency_s = 0.001});
    std::vector<Sample> got;
    std::vector<std::string> msgs;
    acq.start({[&](std::span<const Sample> s) { got.insert(got.end(), s.begin(), s.end()); }, nullptr, nullptr,
               [&](std::string_view m) { msgs.emplace_back(m); }});
    io.run_for(std::chrono::seconds(1));
    REQUIRE(got.size() == 3);
    // Device 1.000 s arrived at 50.010 s (offset 49.010 s), minus 1 ms latency → 50.009 s.
    CHECK(got[0].time_s == Approx(50.009).margin(1e-9));
    // Device 1.001 s came in the same read: offset 49.009 s, the new minimum → 50.009 s.
    CHECK(got[1].time_s == Approx(50.009).margin(1e-9));
    // Device 1.002 s arrived at 50.012 s; the minimum offset 49.009 s still holds → 50.010 s.
    CHECK(got[2].time_s == Approx(50.010).margin(1e-9));
    CHECK(msgs == std::vector<std::string>{"#ok ping"});
    CHECK(acq.counters().stream.bad_records == 1);
    std::filesystem::remove(path);
}

TEST_CASE("acquisition: fault summary lists only what changed", "[acquisition]") {
    const FormatConfig cfg = kv();
    ParserCounters a, b;
    a.channels.resize(1);
    b.channels.resize(1);
    CHECK(describe_new_faults(a, b, cfg).empty());
    b.stream.bad_records = 3;
    b.stream.resync_bytes = 40;
    b.channels[0].nan = 2;
    b.channels[0].good = 1000;  // good samples are not faults
    CHECK(describe_new_faults(a, b, cfg) == "3 bad records, 40 bytes skipped, 2 force nan");
}
