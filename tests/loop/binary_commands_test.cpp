// A binary rig commanded through its control port, the way wire-formats.md
// says a binary stream is commanded: the real tensile-sim streams binary
// frames on one TCP port and answers commands on another; the daemon's
// acquisition reads both (the control port as a `control` source) and the
// command output sends hold, resume, extensometer-off and stop there. Each
// must be acknowledged, and obeyed: the simulator's truth logs them from the
// control port, and frames after extensometer-off carry no extension.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>

#include <nlohmann/json.hpp>
#include <spdlog/sinks/null_sink.h>
#include <unistd.h>

#include "config/daemon_config.hpp"
#include "daemon/tensiled/acquisition.hpp"
#include "drivers/outputs.hpp"
#include "live_sim.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

TEST_CASE("binary rig: hold, resume, extensometer-off and stop acknowledged on the control port") {
    const auto truth_file = std::filesystem::temp_directory_path() / ("tensiled-ctl-" + std::to_string(::getpid()) + ".json");
    LiveSim sim("--tcp 127.0.0.1:0 --control tcp:127.0.0.1:0 --format binary --realtime --speed 20 "
                "--material harbourline-dc04-lot5 --truth " + truth_file.string(),
                2);
    const std::string data = sim.target(""), control = sim.target("control");
    REQUIRE_THAT(data, Catch::StartsWith("127.0.0.1:"));
    REQUIRE_THAT(control, Catch::StartsWith("127.0.0.1:"));
    const std::string config_text =
        "[rig]\ncommands = \"frame\"\n"
        "[source.rig]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " + std::to_string(LiveSim::port_of(data)) +
        "\nformat = \"binary\"\nclock_pace = 20\n"
        "  [[source.rig.channel]]\n  name = \"force\"\n  unit = \"N\"\n  scale = 0.001\n"
        "  [[source.rig.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  scale = 0.0001\n"
        "  [[source.rig.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  scale = 0.0001\n"
        "[source.control]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " + std::to_string(LiveSim::port_of(control)) +
        "\nformat = \"control\"\n"
        "[output.frame]\nkind = \"command\"\nsource = \"control\"\nack_timeout_ms = 500\n";
    const auto config = load_daemon_config_text(config_text, "/tmp");

    boost::asio::io_context io;
    auto log = std::make_shared<spdlog::logger>("ctl", std::make_shared<spdlog::sinks::null_sink_mt>());
    std::vector<drivers::AlignedFrame> frames;
    bool control_up = false, started = false;
    std::vector<drivers::CommandResult> results;
    std::size_t frames_at_ext_off = 0;
    std::shared_ptr<drivers::CommandSender> sender;
    const std::vector<std::string> commands{"hold", "resume", "extensometer-off", "stop"};
    std::function<void(std::size_t)> send = [&](std::size_t k) {
        if (k == commands.size()) return;
        sender->submit(commands[k], [&, k](const drivers::CommandResult& r) {
            results.push_back(r);
            if (commands[k] == "extensometer-off") frames_at_ext_off = frames.size();
            send(k + 1);
        });
    };
    AcquisitionHandlers h;
    h.on_frames = [&](const std::vector<drivers::AlignedFrame>& f, double) {
        frames.insert(frames.end(), f.begin(), f.end());
        // A few seconds into the test, with the control port up: command it.
        if (!started && control_up && frames.size() > 5000) {
            started = true;
            send(0);
        }
    };
    h.on_state = [&](const std::string& source, drivers::SourceState s) {
        if (source == "control") control_up = s == drivers::SourceState::connected;
    };
    Acquisition acquisition(io, config, h, log);
    sender = drivers::CommandSender::create(io, acquisition.source("control"), config.drivers.outputs[0].command, log);
    acquisition.on_device_message("control", [&](std::string_view line) { sender->on_device_message(line); });
    acquisition.start();
    sim.run_until_done(io, [&] { acquisition.stop(); }, std::chrono::seconds(60));
    REQUIRE(sim.exited_cleanly());

    REQUIRE(results.size() == commands.size());
    for (std::size_t k = 0; k < commands.size(); ++k) {
        INFO(commands[k] << ": " << drivers::name_of(results[k].outcome) << " after " << results[k].attempts << " attempts, "
                         << results[k].reply);
        CHECK(results[k].outcome == drivers::CommandOutcome::acknowledged);
        CHECK(results[k].reply == "#ok " + commands[k]);
    }
    const auto truth = json::parse(std::ifstream(truth_file));
    std::filesystem::remove(truth_file);
    std::vector<std::string> obeyed;
    for (const auto& c : truth["commands"]) {
        CHECK(c["from"] == "control");
        obeyed.push_back(c["line"]);
    }
    CHECK(obeyed == commands);
    CHECK(truth["times"].contains("extensometer_off_s"));
    CHECK_FALSE(truth["times"].contains("fracture_s"));  // stopped before the specimen broke
    // The stream's own data: no extension once the extensometer is off (a few frames may still be in flight).
    REQUIRE(frames.size() > frames_at_ext_off + 100);
    CHECK(std::isnan(frames.back().frame.extension_mm));
    CHECK(frames.back().flags[1] & drivers::flag::overload);
    for (const auto& st : acquisition.status()) {
        if (st.name != "control") continue;
        CHECK(st.counters.stream.device_messages == commands.size());
        CHECK(st.counters.stream.bad_records == 0);
    }
}
