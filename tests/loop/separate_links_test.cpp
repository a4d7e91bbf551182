// A rig whose channels travel apart: the real tensile-sim plays one test with
// force at 1 kHz on a pseudo-terminal (a serial port), extension at 500 Hz on
// one TCP connection and crosshead at 200 Hz on another, each device with its
// own clock (start offset and drift from the seed). The daemon's acquisition,
// built from a rig config with one source per channel exactly as tensiled
// builds it, reads the three links live; the aligner merges them into frames
// at the force rate; the analysis of those frames must recover the
// simulator's ground truth.
//
// Tolerances are issue 3's whole-loop targets (Rp0.2 within 1 %, Rm within
// 0.5 %, E within 3 %); the same test on one connection meets them by a wide
// margin (README, "Accuracy against the simulator's ground truth"), so what
// they check here is that splitting the channels, their clocks and rates
// costs nothing that matters. Fm is held to the force class of the simulated
// load cell (ISO 7500-1 class 1: ±1 % of the reading), since force is the
// master channel and is never interpolated.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <thread>

#include <boost/asio/io_context.hpp>
#include <nlohmann/json.hpp>
#include <spdlog/sinks/null_sink.h>
#include <unistd.h>

#include "config/daemon_config.hpp"
#include "daemon/tensiled/acquisition.hpp"
#include "engine/analyzer.hpp"
#include "live_sim.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

namespace {

constexpr double speed = 10;  // simulated seconds per wall second: the whole test in about 8 s
constexpr double held_s = 20;  // the frame idles this long before it moves

// One source per link; clock_pace tells the time bases that the devices run at `speed`.
std::string rig_config(const std::string& force_pty, int ext_port, int xh_port) {
    const std::string pace = "clock_pace = " + std::to_string(speed) + "\n";
    return "[rig]\nmaster = \"force\"\n"
           "[source.load]\nkind = \"serial\"\npath = \"" + force_pty + "\"\nformat = \"lines\"\ntime_field = 0\n" + pace +
           "  [[source.load.channel]]\n  name = \"force\"\n  unit = \"N\"\n  field = 1\n"
           "[source.ext]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " + std::to_string(ext_port) +
           "\nformat = \"lines\"\ntime_field = 0\n" + pace +
           "  [[source.ext.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  field = 1\n"
           "[source.xh]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " + std::to_string(xh_port) +
           "\nformat = \"lines\"\ntime_field = 0\n" + pace +
           "  [[source.xh.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  field = 1\n";
}

}  // namespace

// The frame is held for the first 20 s, as a rig idles through tare and
// settling before a test: the time bases fit each link's clock on that
// stream. Without it the elastic part, 1.5 s of test time, would fall into
// the time bases' first second, before any clock fit exists (measured: E
// came out 26 % low).
TEST_CASE("channels on three links at three rates are merged into frames that recover the truth") {
    const auto truth_file = std::filesystem::temp_directory_path() / ("tensiled-links-" + std::to_string(::getpid()) + ".json");
    LiveSim sim("--material harbourline-6061t6-lot12 --format lines --seed 5 --realtime --speed " + std::to_string(speed) +
                    " --link force@1000=pty --link extension@500=tcp:127.0.0.1:0 --link crosshead@200=tcp:127.0.0.1:0" +
                    " --at 0:hold --at " + std::to_string(held_s) + ":resume --truth " +
                    truth_file.string(),
                3);
    const std::string pty = sim.target("force");
    const std::string ext = sim.target("extension"), xh = sim.target("crosshead");
    REQUIRE_THAT(pty, Catch::StartsWith("/dev/"));
    REQUIRE_THAT(ext, Catch::StartsWith("127.0.0.1:"));
    REQUIRE_THAT(xh, Catch::StartsWith("127.0.0.1:"));

    boost::asio::io_context io;
    std::vector<drivers::AlignedFrame> frames;
    AcquisitionHandlers h;
    h.on_frames = [&](const std::vector<drivers::AlignedFrame>& f, double) { frames.insert(frames.end(), f.begin(), f.end()); };
    const auto config = load_daemon_config_text(rig_config(pty, LiveSim::port_of(ext), LiveSim::port_of(xh)), "/tmp");
    Acquisition acquisition(io, config, h, std::make_shared<spdlog::logger>("links", std::make_shared<spdlog::sinks::null_sink_mt>()));
    acquisition.start();
    sim.run_until_done(io, [&] { acquisition.stop(); }, std::chrono::seconds(60));
    REQUIRE(sim.exited_cleanly());

    const auto truth = json::parse(std::ifstream(truth_file));
    std::filesystem::remove(truth_file);
    REQUIRE(truth["links"].size() == 3);
    // Sources in the order of the truth's links: force, extension, crosshead.
    std::vector<Acquisition::SourceStatus> status;
    for (const char* name : {"load", "ext", "xh"})
        for (const auto& st : acquisition.status())
            if (st.name == name) status.push_back(st);
    REQUIRE(status.size() == 3);
    // Every record each device sent was read and parsed: none lost or invented on clean links.
    for (std::size_t k = 0; k < 3; ++k) {
        const auto& link = truth["links"][k];
        const auto& c = status[k].counters.stream;
        INFO(status[k].name << ": " << c.records << " records of " << link["samples"] << ", rate " << link["rate_hz"]
                            << " Hz, clock offset " << link["clock_offset_s"] << " s, drift " << link["clock_drift_ppm"] << " ppm");
        CHECK(c.records == link["samples"].get<std::uint64_t>());
        CHECK(c.bad_records == 0);
        CHECK(c.resync_bytes == 0);
    }
    CHECK(truth["links"][1]["clock_offset_s"].get<double>() > 1.0);  // the devices' clocks really differ

    // One frame per force reading, but for those still waiting for the slower links when the stream ended.
    const auto force_records = status[0].counters.stream.records;
    CHECK(frames.size() <= force_records);
    CHECK(frames.size() + 200 >= force_records);
    std::size_t stale = 0;
    for (const auto& f : frames)
        if ((f.flags[1] | f.flags[2]) & drivers::flag::stale) ++stale;
    // Stale means a slower link's reading did not arrive within the aligner's
    // wait (50 ms): the first instants, before the later links delivered, and
    // moments when the machine is starved of CPU. A clock mapped wrongly would
    // leave a link behind for good and most frames stale.
    INFO(stale << " of " << frames.size() << " frames stale");
    CHECK(stale * 100 < frames.size());

    Analyzer analyzer({truth["S0_mm2"].get<double>(), truth["L0_mm"].get<double>(), 0}, Profile{});
    std::vector<Event> events;
    // The run starts at a preload, as the daemon starts one (its example profile
    // uses 50 N; 20 N here, well above the idle noise of about 1 N).
    bool started = false;
    double t0 = 0;
    for (auto f : frames) {
        if (!started && !(f.frame.force_N >= 20)) continue;
        if (!started) t0 = f.frame.time_s;
        started = true;
        f.frame.time_s = (f.frame.time_s - t0) * speed;  // host seconds back to test seconds
        analyzer.push(f.frame, events);
    }
    const auto r = analyzer.finish();
    REQUIRE(r.proof(0.2));
    INFO("Rp0.2 " << *r.proof(0.2) << " / " << truth["Rp0.2_MPa"] << ", Rm " << *r.Rm_MPa << " / " << truth["Rm_MPa"] << ", E "
                  << *r.E_MPa << " / " << truth["E_MPa"]);
    CHECK(*r.proof(0.2) == Approx(truth["Rp0.2_MPa"].get<double>()).epsilon(0.01));
    CHECK(*r.Rm_MPa == Approx(truth["Rm_MPa"].get<double>()).epsilon(0.005));
    CHECK(*r.E_MPa == Approx(truth["E_MPa"].get<double>()).epsilon(0.03));
    CHECK(*r.Fm_N == Approx(truth["Fm_N"].get<double>()).epsilon(0.01));
}
