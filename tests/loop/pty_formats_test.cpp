// Every wire format over a pseudo-terminal, as over a serial port: the real
// tensile-sim serves a whole test on `--pty` with injected faults; the
// daemon's acquisition (serial source through termios, parser, time base,
// aligner) reads it. What the parser counts must be exactly what the
// simulator's truth says it did to the stream, by the framing rules of
// drivers/wire-formats.md:
//   - text: a torn record lost its line end, so each run of torn records runs
//     into the next whole record: one bad line, fragment and glued bytes
//     discarded, those records lost, even where the glued line would parse
//     (the stamp rules refuse it); `nan` and `OVER` fields are counted per
//     channel and the record kept;
//   - binary: every garbage byte and every byte of a torn frame is skipped
//     while hunting for the sync; a torn frame is missing from the sequence;
//     the frame after it is found whole; nan is sent as the overload count.
// Everything else arrives: records = samples sent − records lost.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>

#include <nlohmann/json.hpp>
#include <spdlog/sinks/null_sink.h>
#include <unistd.h>

#include "config/daemon_config.hpp"
#include "daemon/tensiled/acquisition.hpp"
#include "live_sim.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

namespace {

std::string rig_config(const std::string& format, const std::string& pty) {
    std::string c = "[source.rig]\nkind = \"serial\"\npath = \"" + pty + "\"\nformat = \"" + format + "\"\n";
    const char* names[] = {"force", "extension", "crosshead"};
    const char* units[] = {"N", "mm", "mm"};
    const char* keys[] = {"F", "ext", "xh"};
    const char* scales[] = {"0.001", "0.0001", "0.0001"};  // wire-formats.md: the simulator's binary scales
    if (format == "lines") c += "time_field = 0\n";
    for (int i = 0; i < 3; ++i) {
        c += "  [[source.rig.channel]]\n  name = \"" + std::string(names[i]) + "\"\n  unit = \"" + units[i] + "\"\n";
        if (format == "lines") c += "  field = " + std::to_string(i + 1) + "\n";
        if (format == "keyvalue") c += "  key = \"" + std::string(keys[i]) + "\"\n";
        if (format == "binary") c += "  scale = " + std::string(scales[i]) + "\n";
    }
    return c;
}

const json& fault(const json& truth, const std::string& kind) {
    for (const auto& f : truth["faults"])
        if (f["kind"] == kind) return f;
    FAIL("no " << kind << " fault in the truth");
    return truth;
}

std::uint64_t u(const json& j, const char* key) { return j[key].get<std::uint64_t>(); }

}  // namespace

TEST_CASE("each wire format over a pty: every record arrives, fault counters equal the simulator's truth") {
    for (const std::string format : {"lines", "keyvalue", "binary"}) {
        SECTION(format) {
            const auto truth_file = std::filesystem::temp_directory_path() /
                                    ("tensiled-pty-" + std::to_string(::getpid()) + "-" + format + ".json");
            const bool binary = format == "binary";
            // Text: nan and OVER fields, torn lines. Binary: garbage between frames, nan, torn frames.
            const std::string faults = binary ? " --fault garbage@3+2:3000 --fault nan@6+1:force --fault torn@12+2:0.05"
                                              : " --fault nan@6+1:force --fault over@8+1:extension --fault torn@12+2:0.05";
            LiveSim sim("--pty --fast --seed 9 --material harbourline-6061t6-lot12 --format " + format + faults + " --truth " +
                            truth_file.string(),
                        1);
            REQUIRE(sim.announced().size() == 1);
            REQUIRE_THAT(sim.announced()[0], Catch::StartsWith("pty /dev/"));
            const std::string pty = sim.target("");

            boost::asio::io_context io;
            std::uint64_t frames = 0;
            AcquisitionHandlers h;
            h.on_frames = [&](const std::vector<drivers::AlignedFrame>& f, double) { frames += f.size(); };
            // A pty never drops its line: a gap here would mean the source lost the
            // port and reopened it, which is where bytes can go missing.
            std::string gaps;
            h.on_gap = [&](const drivers::GapEvent& g) { gaps += g.reason + "; "; };
            Acquisition acquisition(io, load_daemon_config_text(rig_config(format, pty), "/tmp"), h,
                                    std::make_shared<spdlog::logger>("pty", std::make_shared<spdlog::sinks::null_sink_mt>()));
            acquisition.start();
            sim.run_until_done(io, [&] { acquisition.stop(); }, std::chrono::seconds(60));
            REQUIRE(sim.exited_cleanly());

            const auto truth = json::parse(std::ifstream(truth_file));
            std::filesystem::remove(truth_file);
            const auto status = acquisition.status();
            const auto& c = status[0].counters;
            const auto& s = c.stream;
            const std::uint64_t samples = truth["run"]["samples"].get<std::uint64_t>();
            INFO(format << ": gaps: " << (gaps.empty() ? "none" : gaps));
            const auto& torn = fault(truth, "torn");
            const auto& nan = fault(truth, "nan");
            INFO(format << ": " << samples << " samples sent; " << s.records << " records, " << s.bad_records << " bad, "
                        << s.resync_bytes << " resync bytes, " << s.checksum_failures << " checksum failures, " << s.lost_frames
                        << " lost frames; truth torn " << torn.dump());
            REQUIRE(u(torn, "records") > 50);
            if (binary) {
                const auto& garbage = fault(truth, "garbage");
                CHECK(s.records == samples - u(torn, "records"));
                CHECK(s.lost_frames == u(torn, "records"));
                CHECK(s.resync_bytes == u(garbage, "bytes") + u(torn, "fragment_bytes"));
                CHECK(s.bad_records == 0);
                CHECK(c.channels[0].overload == u(nan, "records"));
                // Each failed check drops one byte, so failures never outnumber the skipped bytes.
                CHECK(s.checksum_failures <= s.resync_bytes);
                CHECK(frames == s.records);  // one frame per frame received
            } else {
                const auto& over = fault(truth, "over");
                // Every line on the wire reached the parser once: the untouched records
                // plus one glued line per run of torn records, which the stamp rules
                // (drivers/text_line_parser.hpp) refuse even where it would parse.
                CHECK(s.records + s.bad_records == samples - u(torn, "records"));
                CHECK(s.bad_records == u(torn, "runs"));
                // The truth counts the glued record's line end ("\n" here); the parser
                // counts the bytes of the bad line without its end.
                CHECK(s.resync_bytes + u(torn, "runs") == u(torn, "fragment_bytes") + u(torn, "glued_bytes"));
                CHECK(s.checksum_failures == 0);
                CHECK(c.channels[0].nan == u(nan, "records"));
                CHECK(c.channels[1].overload == u(over, "records"));
                CHECK(frames == s.records - u(nan, "records"));  // a record without force makes no frame
            }
        }
    }
}
