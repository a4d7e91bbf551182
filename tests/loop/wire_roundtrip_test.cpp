// Every wire format round trip: the simulator writes a test in `lines`,
// `keyvalue` and `binary`; the daemon's frame pipeline (parsers, time base,
// aligner, built from a rig config as the daemon builds it) reads the bytes
// back; no record is lost or invented on a clean stream, and the analysis of
// the frames recovers the simulator's ground truth.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <iterator>
#include <nlohmann/json.hpp>
#include <unistd.h>

#include "config/daemon_config.hpp"
#include "daemon/tensiled/frame_pipeline.hpp"
#include "engine/analyzer.hpp"
#include "support/process.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

namespace {

std::string rig_config(const std::string& format) {
    std::string channels;
    if (format == "lines") {
        channels = R"(time_field = 0
  [[source.rig.channel]]
  name = "force"
  unit = "N"
  field = 1
  [[source.rig.channel]]
  name = "extension"
  unit = "mm"
  field = 2
  [[source.rig.channel]]
  name = "crosshead"
  unit = "mm"
  field = 3
)";
    } else if (format == "keyvalue") {
        channels = R"(time_key = "t"
  [[source.rig.channel]]
  name = "force"
  unit = "N"
  key = "F"
  [[source.rig.channel]]
  name = "extension"
  unit = "mm"
  key = "ext"
  [[source.rig.channel]]
  name = "crosshead"
  unit = "mm"
  key = "xh"
)";
    } else {  // binary: counts scaled as wire-formats.md gives the simulator's scales
        channels = R"(  [[source.rig.channel]]
  name = "force"
  unit = "N"
  scale = 0.001
  [[source.rig.channel]]
  name = "extension"
  unit = "mm"
  scale = 0.0001
  [[source.rig.channel]]
  name = "crosshead"
  unit = "mm"
  scale = 0.0001
)";
    }
    return "[source.rig]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = 1\nformat = \"" + format + "\"\n" + channels;
}

}  // namespace

TEST_CASE("lines, keyvalue and binary streams read back frame for frame and recover the truth") {
    for (const char* format : {"lines", "keyvalue", "binary"}) {
        SECTION(format) {
            const auto dir = std::filesystem::temp_directory_path();
            const auto stem = "tensiled-wire-" + std::to_string(::getpid()) + "-" + format;
            const auto stream = (dir / (stem + ".bin")).string();
            const auto truth_file = (dir / (stem + ".json")).string();
            const auto sim = run_command(bin("tensile-sim") + " --material harbourline-6061t6-lot12 --format " + format +
                                         " --fast --out " + stream + " --truth " + truth_file);
            REQUIRE(sim.code == 0);
            const auto truth = json::parse(std::ifstream(truth_file));
            std::ifstream in(stream, std::ios::binary);
            const std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());

            FramePipeline pipeline(load_daemon_config_text(rig_config(format), "/tmp"));
            std::vector<drivers::AlignedFrame> frames;
            // Reads of 4 KiB arriving 1 ms apart, as a serial line would deliver them.
            double arrival = 1000.0;
            for (std::size_t at = 0; at < bytes.size(); at += 4096, arrival += 0.001)
                pipeline.feed(0, std::as_bytes(std::span(bytes.data() + at, std::min<std::size_t>(4096, bytes.size() - at))),
                              arrival, frames);

            const auto& c = pipeline.counters(0);
            INFO(format << ": " << c.stream.records << " records, " << frames.size() << " frames");
            CHECK(c.stream.bad_records == 0);
            CHECK(c.stream.resync_bytes == 0);
            CHECK(c.stream.checksum_failures == 0);
            CHECK(c.stream.lost_frames == 0);
            // The aligner holds back only the frames still waiting at the end of the stream.
            CHECK(frames.size() + 100 >= c.stream.records);
            CHECK(frames.size() <= c.stream.records);

            Analyzer analyzer({truth["S0_mm2"].get<double>(), truth["L0_mm"].get<double>(), 0}, Profile{});
            std::vector<Event> events;
            const double t0 = frames.front().frame.time_s;
            for (auto f : frames) {
                f.frame.time_s -= t0;
                analyzer.push(f.frame, events);
            }
            const auto r = analyzer.finish();
            REQUIRE(r.proof(0.2));
            CHECK(*r.proof(0.2) == Approx(truth["Rp0.2_MPa"].get<double>()).epsilon(0.01));
            CHECK(*r.Rm_MPa == Approx(truth["Rm_MPa"].get<double>()).epsilon(0.005));
            CHECK(*r.E_MPa == Approx(truth["E_MPa"].get<double>()).epsilon(0.03));
            std::filesystem::remove(stream);
            std::filesystem::remove(truth_file);
        }
    }
}
