// A stored run played back into a second, independent daemon: `tensile-sim
// replay` serves the run's recorded bytes over TCP in their original timing,
// a fresh tensiled with the run's own config (its source pointed at the
// replay) is armed with the run's specimen through the monitor API, takes its
// tare, starts at the preload, sees the extensometer go silent at the
// hand-over and the fracture, and files a run with the same results.
#include <catch2/catch.hpp>

#include <cstdio>
#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>
#include <filesystem>
#include <fstream>
#include <regex>

#include <nlohmann/json.hpp>

#include "monitor/daemon_fixture.hpp"
#include "recorded_runs.hpp"

using namespace tensile;
using namespace tensile::testing;
using nlohmann::json;

extern char** environ;

namespace {

// The run's config with its source pointed at `port` and its data kept in `dir`.
std::string replay_config(std::string text, int port, const std::filesystem::path& dir) {
    // "$01": the two-digit group form, so the port's digits are not read as a group number.
    text = std::regex_replace(text, std::regex(R"((\[source\.frame\][^\[]*?port\s*=\s*)[0-9]+)"), "$01" + std::to_string(port));
    text = std::regex_replace(text, std::regex(R"(data_dir\s*=\s*"[^"]*")"), "data_dir = \"" + dir.string() + "\"");
    text = std::regex_replace(text, std::regex(R"(\[monitor\])"),
                              "[monitor]\ntoken_file = \"" + (dir / "token").string() + "\"");
    return text;
}

// `tensile-sim replay` serving one stored run on a free loopback port; the
// process is stopped when this goes away, whatever the test's outcome, so a
// failed check never leaves it waiting for a client.
class ReplayServer {
public:
    ReplayServer(const std::string& db, std::int64_t run, int at_port) {
        int out[2];
        REQUIRE(::pipe2(out, O_CLOEXEC) == 0);
        const std::string exe = bin("tensile-sim");
        std::vector<std::string> args{exe, "replay", "--db", db, "--run", std::to_string(run), "--source", "frame", "--tcp", "127.0.0.1:" + std::to_string(at_port), "--speed", "1"};
        std::vector<char*> argv;
        for (auto& a : args) argv.push_back(a.data());
        argv.push_back(nullptr);
        posix_spawn_file_actions_t actions;
        posix_spawn_file_actions_init(&actions);
        posix_spawn_file_actions_adddup2(&actions, out[1], 1);
        REQUIRE(posix_spawn(&pid_, exe.c_str(), &actions, nullptr, argv.data(), environ) == 0);
        posix_spawn_file_actions_destroy(&actions);
        ::close(out[1]);
        out_ = ::fdopen(out[0], "r");
        char line[256] = {};
        REQUIRE(std::fgets(line, sizeof line, out_));
        REQUIRE(std::sscanf(line, "tcp 127.0.0.1:%d", &port) == 1);
    }
    ~ReplayServer() {
        if (pid_ > 0) {
            ::kill(pid_, SIGTERM);
            ::waitpid(pid_, nullptr, 0);
        }
        if (out_) std::fclose(out_);
    }
    ReplayServer(const ReplayServer&) = delete;
    ReplayServer& operator=(const ReplayServer&) = delete;
    int port = 0;

private:
    pid_t pid_ = -1;
    FILE* out_ = nullptr;
};

}  // namespace

TEST_CASE("tools: a stored run replayed into a second daemon gives the same results") {
    auto store = open_db();
    const std::int64_t id = 1;
    auto rec = store.load_run(id);
    REQUIRE(rec);
    REQUIRE(rec->results_json);
    const auto want = json::parse(*rec->results_json);

    const auto dir = temp_dir("tensiled-replay-daemon");
    {
        std::ofstream token(dir / "token");
        token << "replay-test-token-0123456789abcdef\n";
    }
    std::filesystem::permissions(dir / "token", std::filesystem::perms::owner_read | std::filesystem::perms::owner_write);
    const std::string bearer = "Bearer replay-test-token-0123456789abcdef";

    // A free port for the replay, which starts only once the daemon is armed.
    int port = 0;
    {
        boost::asio::io_context io;
        boost::asio::ip::tcp::acceptor a(io, {boost::asio::ip::address_v4::loopback(), 0});
        port = a.local_endpoint().port();
    }

    const auto config = dir / "rig.toml";
    {
        std::ofstream out(config);
        out << replay_config(rec->config_snapshot, port, dir);
    }
    // Armed before the bytes flow: the daemon keeps retrying its source until
    // the replay listens, so its tare comes from the same first frames as the
    // original run's, which began recording at its own arming.
    Daemon daemon({"--config", config.string(), "--monitor-port", "0"}, dir / "daemon.log");
    INFO(daemon.output());
    REQUIRE(daemon.port != 0);
    const auto specimen = json::parse(rec->specimen_json);
    const json arm = {{"specimen", specimen}, {"profile", json::parse(rec->profile_json).at("name")}};
    const auto armed = http(daemon.port, "POST", "/api/v1/arm", arm.dump(), bearer);
    INFO(armed.body << "\n" << daemon.output());
    REQUIRE(armed.status == 200);
    ReplayServer replay(db().string(), 1, port);
    REQUIRE(replay.port == port);

    // The run ends by itself at fracture plus the settle time.
    json run;
    const bool ended = wait_for(
        [&] {
            const auto r = http(daemon.port, "GET", "/api/v1/runs/1");
            if (r.status != 200) return false;
            run = json::parse(r.body);
            return run.value("state", "") == "finished";
        },
        60);
    INFO(daemon.output());
    REQUIRE(ended);
    const auto& now = run.at("results");
    // The bytes are the same; the second daemon pairs extensometer and force
    // by its own arrival times, as in the replay test beside this one: force
    // results agree to 1e-4, extensometer results within 1 %.
    CHECK(now.at("Rm_MPa").get<double>() == Approx(want.at("Rm_MPa").get<double>()).epsilon(1e-4));
    CHECK(now.at("Fm_N").get<double>() == Approx(want.at("Fm_N").get<double>()).epsilon(1e-4));
    CHECK(now.at("E_MPa").get<double>() == Approx(want.at("E_MPa").get<double>()).epsilon(1e-2));
    if (want.at("Rp0.2_MPa").is_number())
        CHECK(now.at("Rp0.2_MPa").get<double>() == Approx(want.at("Rp0.2_MPa").get<double>()).epsilon(1e-2));
    if (want.at("ReH_MPa").is_number())
        CHECK(now.at("ReH_MPa").get<double>() == Approx(want.at("ReH_MPa").get<double>()).epsilon(1e-3));
    if (want.at("At_pct").is_number())
        CHECK(now.at("At_pct").get<double>() == Approx(want.at("At_pct").get<double>()).epsilon(2e-2));
    CHECK(daemon.stop() == 0);
    std::filesystem::remove_all(dir);
}
