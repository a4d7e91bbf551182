// The daemon under faults, end to end with the real simulator: a device that
// drops the link and comes back, garbage and NaN on the wire, and the daemon
// itself killed with SIGKILL mid-run and started again.
#include <catch2/catch.hpp>

#include <chrono>
#include <fcntl.h>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <thread>
#include <unistd.h>

#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;
namespace fs = std::filesystem;

extern char** environ;

namespace {
double rel(const json& r, const json& t, const char* key) {
    return (r[key].get<double>() - t[key].get<double>()) / t[key].get<double>();
}
fs::path fresh_dir(const std::string& name) {
    const auto d = fs::temp_directory_path() / ("tensiled-" + name + "-" + std::to_string(::getpid()));
    fs::remove_all(d);
    return d;
}
std::string sql(const fs::path& db, const std::string& q) { return run_command("sqlite3 " + db.string() + " \"" + q + "\"").out; }
}  // namespace

TEST_CASE("a device that drops out, garbage and NaN on the wire: counted, gap filed, results still right") {
    const auto dir = fresh_dir("faults");
    const auto ran = run_command("timeout 120 " + bin("tensiled") +
                                 " --demo --demo-speed 20 --demo-runs 1 --demo-data " + dir.string() +
                                 " --demo-fault disconnect@30+2 --demo-fault garbage@20+30:500 --demo-fault nan@40+3");
    INFO(ran.out);
    REQUIRE(ran.code == 0);
    const auto run = json::parse(std::ifstream(dir / "demo-run-1.json"));
    const auto truth = json::parse(std::ifstream(dir / "demo-truth-1.json"));
    CHECK(run["state"] == "finished");
    CHECK(std::abs(rel(run, truth, "Rp0.2_MPa")) < 0.01);
    CHECK(std::abs(rel(run, truth, "ReH_MPa")) < 0.01);
    CHECK(std::abs(rel(run, truth, "Rm_MPa")) < 0.005);
    CHECK(std::abs(rel(run, truth, "A_pct")) < 0.05);
    // The gap is reported and filed with the run; bad bytes are counted.
    CHECK_THAT(ran.out, Catch::Contains("data again after a gap"));
    const auto db = dir / "tensiled.db";
    CHECK(std::stoi(sql(db, "SELECT count(*) FROM alarms WHERE run_id = 1 AND kind = 'device_back';")) >= 1);
    CHECK(std::stoi(sql(db, "SELECT CAST(sum(value) AS INTEGER) FROM counters WHERE run_id = 1 AND name = 'resync_bytes';")) > 0);
    CHECK(std::stoi(sql(db, "SELECT CAST(sum(value) AS INTEGER) FROM counters WHERE run_id = 1 AND name = 'nan';")) > 0);
    fs::remove_all(dir);
}

TEST_CASE("kill -9 mid-run: on restart the run is interrupted, its frames kept, the database intact") {
    const auto dir = fresh_dir("kill");
    const auto db = dir / "tensiled.db";
    const std::string self = bin("tensiled");
    std::vector<std::string> args{self, "--demo", "--demo-speed", "2", "--demo-data", dir.string()};
    std::vector<char*> argv;
    for (auto& a : args) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 1, "/dev/null", O_WRONLY, 0);
    pid_t pid = -1;
    REQUIRE(posix_spawn(&pid, self.c_str(), &actions, nullptr, argv.data(), environ) == 0);
    posix_spawn_file_actions_destroy(&actions);

    // Well into the first run (about 16 s of test time at double speed), then SIGKILL.
    std::this_thread::sleep_for(std::chrono::seconds(8));
    const auto children = run_command("pgrep -P " + std::to_string(pid)).out;
    REQUIRE(::kill(pid, SIGKILL) == 0);
    ::waitpid(pid, nullptr, 0);
    run_command("kill " + children);  // the orphaned simulator

    const std::string before = sql(db, "SELECT state, (SELECT sum(frame_count) FROM frame_chunks WHERE run_id = 1) FROM runs WHERE id = 1;");
    INFO("before restart: " << before);
    CHECK_THAT(before, Catch::StartsWith("running|"));

    // Restart: the run left open is closed as interrupted, nothing committed is lost.
    const auto again = run_command("timeout 120 " + self + " --demo --demo-speed 20 --demo-runs 1 --demo-data " + dir.string());
    INFO(again.out);
    REQUIRE(again.code == 0);
    CHECK_THAT(again.out, Catch::Contains("closed as interrupted"));
    const auto after = sql(db, "SELECT state, state_cause, (SELECT sum(frame_count) FROM frame_chunks WHERE run_id = 1) FROM runs WHERE id = 1;");
    INFO("after restart: " << after);
    CHECK_THAT(after, Catch::StartsWith("interrupted|daemon stopped without finishing the run|"));
    const long frames_before = std::stol(before.substr(before.find('|') + 1));
    const long frames_after = std::stol(after.substr(after.rfind('|') + 1));
    CHECK(frames_after == frames_before);
    CHECK(frames_after > 5000);  // about 8 s at 1 kHz, less the last commit interval
    CHECK_THAT(sql(db, "PRAGMA integrity_check;"), Catch::StartsWith("ok"));
    CHECK_THAT(sql(db, "SELECT state FROM runs WHERE id = 2;"), Catch::StartsWith("finished"));
    fs::remove_all(dir);
}
