// A reader starved of CPU over a pseudo-terminal (issue 4): the real
// tensile-sim streams binary frames flat out on `--pty` while the daemon's
// acquisition, sharing one core with it, stops reading three times for
// 300 ms mid-stream. A pty with a blocking writer holds what the reader has
// not taken and makes the writer wait, so every frame must arrive: records
// equal to the simulator's count, no sequence gap, no skipped byte. This is
// the path CI suspected when pty tests lost records under load; measured, it
// loses nothing (the loss was a second reader of the same pty, see
// tests/drivers/pty_source_test.cpp), and this keeps it so.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <thread>

#include <nlohmann/json.hpp>
#include <sched.h>
#include <spdlog/sinks/null_sink.h>
#include <unistd.h>

#include "config/daemon_config.hpp"
#include "daemon/tensiled/acquisition.hpp"
#include "live_sim.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

namespace {

std::string binary_rig(const std::string& pty) {
    std::string c = "[source.rig]\nkind = \"serial\"\npath = \"" + pty + "\"\nformat = \"binary\"\n";
    const char* names[] = {"force", "extension", "crosshead"};
    const char* units[] = {"N", "mm", "mm"};
    const char* scales[] = {"0.001", "0.0001", "0.0001"};  // wire-formats.md: the simulator's binary scales
    for (int i = 0; i < 3; ++i)
        c += "  [[source.rig.channel]]\n  name = \"" + std::string(names[i]) + "\"\n  unit = \"" + units[i] +
             "\"\n  scale = " + scales[i] + "\n";
    return c;
}

// Pins the calling thread, and so the simulator it starts, to the core it is
// on; puts the old mask back when done.
class OneCore {
public:
    OneCore() {
        pinned_ = ::sched_getaffinity(0, sizeof old_, &old_) == 0;
        cpu_set_t one;
        CPU_ZERO(&one);
        CPU_SET(::sched_getcpu(), &one);
        pinned_ = pinned_ && ::sched_setaffinity(0, sizeof one, &one) == 0;
    }
    ~OneCore() {
        if (pinned_) ::sched_setaffinity(0, sizeof old_, &old_);
    }

private:
    cpu_set_t old_{};
    bool pinned_ = false;
};

}  // namespace

TEST_CASE("a reader starved of CPU over a pty loses no frame") {
    const auto truth_file = std::filesystem::temp_directory_path() / ("tensiled-starved-" + std::to_string(::getpid()) + ".json");
    std::uint64_t frames = 0, pauses = 0;
    drivers::ParserCounters counters;
    json truth;
    {
        OneCore pin;
        LiveSim sim("--pty --fast --seed 4 --material harbourline-6061t6-lot12 --format binary --truth " + truth_file.string(), 1);
        REQUIRE(sim.announced().size() == 1);
        REQUIRE_THAT(sim.announced()[0], Catch::StartsWith("pty /dev/"));

        boost::asio::io_context io;
        AcquisitionHandlers h;
        h.on_frames = [&](const std::vector<drivers::AlignedFrame>& f, double) {
            frames += f.size();
            // The reading thread stops, as when the machine gives it no CPU.
            if (pauses < 3 && frames >= 12000 * (pauses + 1)) {
                ++pauses;
                std::this_thread::sleep_for(std::chrono::milliseconds(300));
            }
        };
        Acquisition acquisition(io, load_daemon_config_text(binary_rig(sim.target("")), "/tmp"), h,
                                std::make_shared<spdlog::logger>("starved", std::make_shared<spdlog::sinks::null_sink_mt>()));
        acquisition.start();
        sim.run_until_done(io, [&] { acquisition.stop(); }, std::chrono::seconds(60));
        REQUIRE(sim.exited_cleanly());
        counters = acquisition.status()[0].counters;
        truth = json::parse(std::ifstream(truth_file));
        std::filesystem::remove(truth_file);
    }
    const auto samples = truth["run"]["samples"].get<std::uint64_t>();
    const auto& s = counters.stream;
    INFO(samples << " frames sent; " << s.records << " records, " << s.lost_frames << " lost by sequence, " << s.resync_bytes
                 << " bytes skipped, " << pauses << " pauses");
    REQUIRE(pauses == 3);  // the stream was long enough to starve the reader three times
    CHECK(s.records == samples);
    CHECK(s.lost_frames == 0);
    CHECK(s.resync_bytes == 0);
    CHECK(s.checksum_failures == 0);
    CHECK(frames == s.records);
}
