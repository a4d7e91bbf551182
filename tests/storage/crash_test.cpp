// kill -9 in the middle of a run, several times in a row: on reopening, the
// run is interrupted, holds every frame up to the last commit (at most about
// 250 ms lost, DESIGN.md), its frames are gap-free, and PRAGMA integrity_check
// passes. The recorder runs in a real helper process killed with SIGKILL.
#include <catch2/catch.hpp>

#include <chrono>
#include <csignal>
#include <cstdio>
#include <random>
#include <spawn.h>
#include <sys/wait.h>
#include <thread>
#include <unistd.h>

#include "daemon/storage/store.hpp"
#include "tests/support/process.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;

namespace {

double unix_now() {
    return std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}

struct Child {
    pid_t pid = -1;
    FILE* out = nullptr;
};

Child spawn_helper(const std::string& db) {
    int fds[2];
    REQUIRE(::pipe(fds) == 0);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_adddup2(&actions, fds[1], STDOUT_FILENO);
    posix_spawn_file_actions_addclose(&actions, fds[0]);
    const std::string exe = tensile::testing::bin("storage_crash_helper");
    char* argv[] = {const_cast<char*>(exe.c_str()), const_cast<char*>(db.c_str()), nullptr};
    Child c;
    REQUIRE(::posix_spawn(&c.pid, exe.c_str(), &actions, nullptr, argv, environ) == 0);
    posix_spawn_file_actions_destroy(&actions);
    ::close(fds[1]);
    c.out = ::fdopen(fds[0], "r");
    return c;
}

}  // namespace

TEST_CASE("kill -9 mid-run: the run is interrupted with everything committed", "[crash]") {
    tensile::testing::TempDir dir;
    const auto path = dir.file("runs.db");
    std::mt19937 rng(std::random_device{}());
    std::uniform_int_distribution<int> wait_ms(300, 900);
    std::vector<std::pair<std::int64_t, double>> killed;  // run, wall time of the kill

    for (int round = 0; round < 4; ++round) {
        Child c = spawn_helper(path);
        char line[64] = {};
        REQUIRE(std::fgets(line, sizeof line, c.out) != nullptr);  // "run <id>": recording is under way
        long long run = 0;
        REQUIRE(std::sscanf(line, "run %lld", &run) == 1);
        std::this_thread::sleep_for(std::chrono::milliseconds(wait_ms(rng)));
        const double kill_time = unix_now();
        REQUIRE(::kill(c.pid, SIGKILL) == 0);
        int status = 0;
        ::waitpid(c.pid, &status, 0);
        std::fclose(c.out);
        REQUIRE(WIFSIGNALED(status));
        killed.emplace_back(run, kill_time);
    }

    // The next start closes the last run; the helper itself closed the earlier ones.
    auto store = Store::open(path);
    REQUIRE(store.ok());
    REQUIRE(*store->recover_interrupted_runs(unix_now()) == 1);
    auto check = store->db().prepare("PRAGMA integrity_check");
    REQUIRE(*check->step());
    REQUIRE(check->text(0) == "ok");

    for (auto [run, kill_time] : killed) {
        INFO("run " << run);
        auto rec = store->load_run(run);
        REQUIRE(rec.ok());
        CHECK(rec->summary.state == RunState::interrupted);
        CHECK(rec->summary.state_cause == interrupted_cause);
        CHECK(rec->summary.digest_sha256.size() == 64);
        auto frames = store->load_frames(run);
        REQUIRE(frames.ok());
        REQUIRE(!frames->empty());
        // Gap-free: the helper's force is 10 × its frame number.
        for (std::size_t i = 0; i < frames->size(); ++i) REQUIRE((*frames)[i].force_N == 10.0 * static_cast<double>(i));
        const double lost_s = kill_time - frames->back().time_s;
        std::printf("crash round, run %lld: %zu frames kept, last one %.0f ms before the kill\n",
                    static_cast<long long>(run), frames->size(), lost_s * 1000);
        // 250 ms commit rule, plus slack for a loaded 2-core test machine.
        CHECK(lost_s < 0.25 + 0.15);
    }
}
