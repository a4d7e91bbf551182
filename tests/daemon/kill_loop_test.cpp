// Fault matrix, kill -9 at random moments, ten times in a row: the real
// tensiled running its demo rig (the real simulator as its child) is killed
// with SIGKILL at a random point of a run and started again on the same data
// folder. After every restart:
//   - the run that was live is closed as `interrupted`, with its digest;
//   - every frame the API reported as committed just before the kill is
//     stored, and the stored frames have no hole (chunk indices contiguous);
//   - `PRAGMA integrity_check` says ok.
// Delays come from a seeded generator; the seed is printed, and
// TENSILED_KILL_SEED=<seed> repeats a failing sequence.
#include <catch2/catch.hpp>

#include <chrono>
#include <cstdlib>
#include <fcntl.h>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <random>
#include <regex>
#include <signal.h>
#include <spawn.h>
#include <sstream>
#include <sys/wait.h>
#include <thread>
#include <unistd.h>

#include "monitor/daemon_fixture.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;
namespace fs = std::filesystem;

extern char** environ;

namespace {

std::string sql(const fs::path& db, const std::string& q) {
    return run_command("sqlite3 " + db.string() + " \"" + q + "\"").out;
}

std::string slurp(const fs::path& file) {
    std::ifstream in(file);
    std::stringstream s;
    s << in.rdbuf();
    return s.str();
}

// tensiled --demo on `dir`, its output in `log`; returns its pid.
pid_t start_demo(const fs::path& dir, const fs::path& log) {
    const std::string self = bin("tensiled");
    std::vector<std::string> args{self, "--demo", "--demo-speed", "5", "--demo-data", dir.string(), "--monitor-port", "0"};
    std::vector<char*> argv;
    for (auto& a : args) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 1, log.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    posix_spawn_file_actions_adddup2(&actions, 1, 2);
    pid_t pid = -1;
    const int rc = posix_spawn(&pid, self.c_str(), &actions, nullptr, argv.data(), environ);
    posix_spawn_file_actions_destroy(&actions);
    return rc == 0 ? pid : -1;
}

std::uint16_t monitor_port(const fs::path& log) {
    const std::regex line("monitor http://127\\.0\\.0\\.1:([0-9]+)/");
    std::uint16_t port = 0;
    wait_for([&] {
        std::smatch m;
        const auto text = slurp(log);
        if (std::regex_search(text, m, line)) port = static_cast<std::uint16_t>(std::stoi(m[1]));
        return port != 0;
    }, 10);
    return port;
}

}  // namespace

TEST_CASE("kill -9 at ten random moments in a row: each run left open is interrupted with every committed frame") {
    std::uint64_t seed = static_cast<std::uint64_t>(std::chrono::system_clock::now().time_since_epoch().count()) % 1000000;
    if (const char* s = std::getenv("TENSILED_KILL_SEED")) seed = std::stoull(s);
    WARN("kill -9 loop: seed " << seed << " (repeat with TENSILED_KILL_SEED=" << seed << ")");
    std::mt19937_64 rng(seed);
    // Up to 2.5 s into the running phase: 0 to 12 s of simulated test at 5x,
    // through the elastic part, yielding and into hardening.
    std::uniform_real_distribution<double> delay_s(0.0, 2.5);

    const auto dir = temp_dir("tensiled-kill-loop");
    const auto db = dir / "tensiled.db";
    const auto t0 = std::chrono::steady_clock::now();
    for (int round = 1; round <= 10; ++round) {
        const auto log = dir / ("round-" + std::to_string(round) + ".log");
        const pid_t pid = start_demo(dir, log);
        REQUIRE(pid > 0);
        const auto port = monitor_port(log);
        INFO("round " << round << ", seed " << seed << "\n" << slurp(log));
        REQUIRE(port != 0);
        if (round > 1) {
            // The previous round's run is closed as interrupted at this start.
            CHECK_THAT(slurp(log), Catch::Contains("closed as interrupted"));
        }
        const auto status = [&] { return json::parse(http(port, "GET", "/api/v1/status").body); };
        REQUIRE(wait_for([&] { return status()["state"] == "running"; }, 20));
        const double wait = delay_s(rng);
        std::this_thread::sleep_for(std::chrono::duration<double>(wait));
        // What the API says is durable, the moment before the kill.
        const auto before = status();
        const auto run_id = before["run"]["id"].get<std::int64_t>();
        const auto committed = before["recorder"]["frames_committed"].get<std::uint64_t>();
        const auto children = run_command("pgrep -P " + std::to_string(pid)).out;
        REQUIRE(::kill(pid, SIGKILL) == 0);
        ::waitpid(pid, nullptr, 0);
        if (!children.empty()) run_command("kill " + children);  // the orphaned simulator, by its pid

        // Frames committed before this run started belong to earlier runs of
        // the same process (none: each round is a fresh process, first run).
        const auto stored = sql(db, "SELECT coalesce(sum(frame_count), 0), coalesce(max(first_index + frame_count), 0) "
                                    "FROM frame_chunks WHERE run_id = " + std::to_string(run_id) + ";");
        const auto bar = stored.find('|');
        const std::uint64_t frames = std::stoull(stored.substr(0, bar));
        const std::uint64_t extent = std::stoull(stored.substr(bar + 1));
        WARN("round " << round << ": killed " << wait << " s into running, run id " << run_id << ", API said "
                      << committed << " frames committed, " << frames << " stored");
        CHECK(frames >= committed);  // nothing the API called durable is missing
        CHECK(frames == extent);     // and no hole inside the run
        CHECK(frames > 0);
        CHECK(sql(db, "PRAGMA integrity_check;") == "ok\n");  // what the kill left, at rest
    }
    // A last start closes the tenth run; then everything is checked at rest.
    {
        const auto log = dir / "final.log";
        const pid_t pid = start_demo(dir, log);
        REQUIRE(pid > 0);
        REQUIRE(monitor_port(log) != 0);
        CHECK_THAT(slurp(log), Catch::Contains("closed as interrupted"));
        const auto children = run_command("pgrep -P " + std::to_string(pid)).out;
        ::kill(pid, SIGTERM);
        ::waitpid(pid, nullptr, 0);
        if (!children.empty()) run_command("kill " + children);
    }
    const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    WARN("ten kills and restarts took " << took << " s");
    CHECK(sql(db, "SELECT count(*) FROM runs WHERE state = 'interrupted';") == "10\n");
    CHECK(sql(db, "SELECT count(*) FROM runs WHERE state IN ('armed', 'running');") == "0\n");
    CHECK(sql(db, "SELECT count(*) FROM runs WHERE state = 'interrupted' AND length(digest_sha256) = 64;") == "10\n");
    CHECK(sql(db, "PRAGMA integrity_check;") == "ok\n");
    fs::remove_all(dir);
}
