// Fault matrix, database locked by another process, end to end: the real
// tensiled reading the real tensile-sim over TCP, and the sqlite3 shell
// holding the write lock of the daemon's database (`BEGIN EXCLUSIVE` left
// open, as an engineer's forgotten session would).
//
//   - While the lock is held, arming is refused (409) with a message naming
//     the database file and the lock; once it is released, arming works.
//   - A lock taken mid-run: the live state says so at once (status
//     `recorder.db_locked`, a `database_locked` alarm in the live list), the
//     run goes on, nothing is dropped; after the release the recorder catches
//     up and every frame of the run is stored, without a hole in time.
//   - A run that ends while the lock is held is closed (finished, with its
//     digest) once the lock goes; the stop command is answered meanwhile.
//   - The database passes `PRAGMA integrity_check` afterwards.
// And the disk filling under a run, emulated with a size-limited database
// ([daemon] max_database_mb): a `disk_full` alarm, recording stops, what was
// stored stays whole and the daemon keeps serving.
#include <catch2/catch.hpp>

#include <cstdio>
#include <csignal>
#include <nlohmann/json.hpp>
#include <sqlite3.h>

#include "hardening/hardening_rig.hpp"
#include "monitor/daemon_fixture.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;
namespace fs = std::filesystem;

namespace {

// The sqlite3 shell holding the write lock until release(); the constructor
// returns once the shell says it holds it.
class ShellLock {
public:
    explicit ShellLock(const fs::path& db) : said_(db.parent_path() / "shell.out") {
        fs::remove(said_);
        pipe_ = popen(("sqlite3 " + db.string() + " > " + said_.string() + " 2>&1").c_str(), "w");
        REQUIRE(pipe_);
        std::fputs(".timeout 5000\nBEGIN EXCLUSIVE;\n.print holding the lock\n", pipe_);
        std::fflush(pipe_);
        held = wait_for([&] { return run_command("cat " + said_.string()).out.find("holding the lock") != std::string::npos; }, 10);
    }
    void release() {
        if (!pipe_) return;
        std::fputs("COMMIT;\n.quit\n", pipe_);
        pclose(pipe_);
        pipe_ = nullptr;
    }
    ~ShellLock() { release(); }
    bool held = false;

private:
    fs::path said_;
    FILE* pipe_ = nullptr;
};

// True while some connection holds the write lock (probed without waiting).
bool write_locked(const fs::path& db) {
    sqlite3* c = nullptr;
    if (sqlite3_open_v2(db.c_str(), &c, SQLITE_OPEN_READWRITE, nullptr) != SQLITE_OK) {
        sqlite3_close(c);
        return false;
    }
    const bool locked = sqlite3_exec(c, "BEGIN IMMEDIATE", nullptr, nullptr, nullptr) == SQLITE_BUSY;
    if (!locked) sqlite3_exec(c, "ROLLBACK", nullptr, nullptr, nullptr);
    sqlite3_close(c);
    return locked;
}

// The simulator, serving its stream on a free TCP port until killed.
struct Simulator {
    explicit Simulator(const fs::path& dir) {
        const auto out = dir / "sim.out";
        pid = std::stoi(run_command(bin("tensile-sim") + " --tcp 127.0.0.1:0 --realtime --speed 2 --rate 1000 --seed 3 > " +
                                    out.string() + " 2>&1 & echo $!").out);
        wait_for([&] { return run_command("cat " + out.string()).out.find("tcp ") == 0; }, 10);
        const auto line = run_command("cat " + out.string()).out;
        port = std::stoi(line.substr(line.rfind(':') + 1));
    }
    ~Simulator() { ::kill(pid, SIGTERM); }
    int pid = 0;
    int port = 0;
};

fs::path write_config(const fs::path& dir, int sim_port, const std::string& daemon_extra = "") {
    auto file = write_hardening_config(dir);
    // The hardening rig with its source pointed at the simulator.
    std::ifstream in(file);
    std::stringstream text;
    text << in.rdbuf();
    auto s = text.str();
    const auto at = s.find("port = ", s.find("[source.frame]"));
    s.replace(at, s.find('\n', at) - at, "port = " + std::to_string(sim_port));
    if (!daemon_extra.empty()) s.insert(s.find('\n', s.find("[daemon]")) + 1, daemon_extra);
    std::ofstream(file) << s;
    return file;
}

json status_of(std::uint16_t port) { return json::parse(http(port, "GET", "/api/v1/status").body); }

// Whether the live alarm list holds one of this kind.
bool alarm_raised(std::uint16_t port, const std::string& kind) {
    const auto now = status_of(port);  // kept: a loop over a temporary's member would dangle
    for (const auto& a : now["alarms"])
        if (a["kind"] == kind) return true;
    return false;
}

// One tensiled with its config against one simulator, its source connected;
// the database under dir/data. `daemon_extra`: lines added to [daemon].
struct ServedRig {
    explicit ServedRig(const std::string& name, const std::string& daemon_extra = "")
        : dir(temp_dir(name)), sim(dir), d({"--config", write_config(dir, sim.port, daemon_extra).string()}, dir / "out.log") {
        REQUIRE(sim.port > 0);
        REQUIRE(d.port != 0);
        p = d.port;
        bearer = "Bearer " + read_token(dir);
        REQUIRE(wait_for([&] { return status()["sources"][0]["state"] == "connected"; }, 10));
    }
    json status() const { return status_of(p); }
    bool has_alarm(const std::string& kind) const { return alarm_raised(p, kind); }
    std::string sql(const std::string& q) const { return run_command("sqlite3 " + db.string() + " \"" + q + "\"").out; }

    fs::path dir;
    Simulator sim;
    Daemon d;
    fs::path db = dir / "data" / "tensiled.db";
    decltype(Daemon::port) p{};
    std::string bearer;
};

}  // namespace

TEST_CASE("database locked by another process: arming refused, a lock mid-run loses no frame, a run ended under it is kept") {
    ServedRig rig("tensiled-hardening-lock");
    INFO(rig.d.output());
    const std::string arm =
        R"({"specimen": {"label": "HM-0731", "shape": "round", "diameter_mm": 10, "gauge_length_mm": 50}})";

    // 1. Locked before arming: refused, naming the file and the lock.
    {
        ShellLock lock(rig.db);
        REQUIRE(lock.held);
        REQUIRE(write_locked(rig.db));
        const auto t0 = std::chrono::steady_clock::now();
        const auto refused = http(rig.p, "POST", "/api/v1/arm", arm, rig.bearer);
        const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
        INFO(refused.body);
        CHECK(refused.status == 409);
        CHECK_THAT(refused.body, Catch::Contains(rig.db.string()));
        CHECK_THAT(refused.body, Catch::Contains("database is locked"));
        CHECK(took < 2.0);  // answered promptly, not after a long busy wait
        CHECK(rig.status()["state"] == "idle");
    }
    REQUIRE_FALSE(write_locked(rig.db));
    REQUIRE(http(rig.p, "POST", "/api/v1/arm", arm, rig.bearer).status == 200);
    REQUIRE(wait_for([&] { return rig.status()["state"] == "running"; }, 10));  // preload passed

    // 2. A lock mid-run, 3 s long.
    std::this_thread::sleep_for(std::chrono::seconds(1));
    const auto before = rig.status()["recorder"];
    CHECK(before["frames_committed"].get<std::uint64_t>() > 500);  // committed before the fault
    CHECK(before["frames_dropped"] == 0);
    {
        ShellLock lock(rig.db);
        REQUIRE(lock.held);
        REQUIRE(write_locked(rig.db));
        CHECK(wait_for([&] { return rig.status()["recorder"]["db_locked"] == true; }, 3));
        INFO(rig.status().dump());
        CHECK(rig.has_alarm("database_locked"));
        std::this_thread::sleep_for(std::chrono::seconds(3));
        const auto during = rig.status();
        CHECK(during["state"] == "running");
        CHECK(during["recorder"]["frames_dropped"] == 0);
        CHECK(during["recorder"]["backlog_bytes"].get<std::uint64_t>() > 0);
        CHECK(during["recorder"]["frames_queued"].get<std::uint64_t>() >
              during["recorder"]["frames_committed"].get<std::uint64_t>() + 2000);  // 3 s at 2000 frames/s held back
    }
    CHECK(wait_for([&] { return rig.status()["recorder"]["db_locked"] == false; }, 5));
    CHECK(wait_for([&] { return rig.has_alarm("database_unlocked"); }, 3));

    // 3. The run ends while a second lock is held: answered, closed later.
    std::this_thread::sleep_for(std::chrono::seconds(1));
    {
        ShellLock lock(rig.db);
        REQUIRE(lock.held);
        REQUIRE(write_locked(rig.db));
        CHECK(wait_for([&] { return rig.status()["recorder"]["db_locked"] == true; }, 3));
        const auto t0 = std::chrono::steady_clock::now();
        CHECK(http(rig.p, "POST", "/api/v1/stop", "", rig.bearer).status == 200);
        CHECK(std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count() < 4.0);
        std::this_thread::sleep_for(std::chrono::seconds(1));
        CHECK(json::parse(http(rig.p, "GET", "/api/v1/runs/1").body)["state"] == "running");  // not closed yet
    }
    CHECK(wait_for([&] { return json::parse(http(rig.p, "GET", "/api/v1/runs/1").body)["state"] == "finished"; }, 5));

    // Every frame routed to the run is stored, with no hole where the locks were.
    const auto end = rig.status()["recorder"];
    const auto run = json::parse(http(rig.p, "GET", "/api/v1/runs/1").body);
    INFO(run.dump().substr(0, 2000));
    CHECK(end["frames_dropped"] == 0);
    CHECK(end["write_errors"] == 0);
    CHECK(run["frame_count"].get<std::uint64_t>() == end["frames_queued"].get<std::uint64_t>());
    CHECK(run["frame_count"].get<std::uint64_t>() == end["frames_committed"].get<std::uint64_t>());
    CHECK(run["digest_sha256"].get<std::string>().size() == 64);
    const auto frames = json::parse(http(rig.p, "GET", "/api/v1/runs/1/frames?points=100").body);
    std::uint64_t least = ~0ull, total = 0;
    for (const auto& c : frames["buckets"]["count"]) {
        least = std::min(least, c.get<std::uint64_t>());
        total += c.get<std::uint64_t>();
    }
    CHECK(total == run["frame_count"].get<std::uint64_t>());
    // 100 slices of a ~12 s run at 2000 frames/s: ~240 each; a hole would leave some empty.
    CHECK(least > total / 100 / 2);
    // The last release comes after the run's close, so it belongs to no run.
    CHECK(rig.sql("SELECT kind FROM alarms WHERE kind LIKE 'database_%' ORDER BY id;") ==
          "database_locked\ndatabase_unlocked\ndatabase_locked\ndatabase_unlocked\n");
    CHECK(rig.sql("PRAGMA integrity_check;") == "ok\n");
    CHECK(rig.d.stop() == 0);
    fs::remove_all(rig.dir);
}

TEST_CASE("the disk fills under a run: a disk_full alarm, recording stops, what was stored stays whole") {
    ServedRig rig("tensiled-hardening-full", "max_database_mb = 0.75\n");
    INFO(rig.d.output());
    const std::string arm =
        R"({"specimen": {"label": "HM-0732", "shape": "round", "diameter_mm": 10, "gauge_length_mm": 50}})";
    REQUIRE(http(rig.p, "POST", "/api/v1/arm", arm, rig.bearer).status == 200);
    REQUIRE(wait_for([&] { return rig.status()["state"] == "running"; }, 10));
    // About 110 kB a second of frames and raw bytes: the 0.75 MB cap is met within seconds.
    REQUIRE(wait_for([&] { return rig.has_alarm("disk_full"); }, 30));
    const auto at_full = rig.status()["recorder"];
    INFO(at_full.dump());
    std::this_thread::sleep_for(std::chrono::seconds(1));
    const auto later = rig.status()["recorder"];
    CHECK(later["frames_refused_disk"].get<std::uint64_t>() > at_full["frames_refused_disk"].get<std::uint64_t>());
    CHECK(later["frames_committed"] == at_full["frames_committed"]);  // recording stopped
    CHECK(rig.status()["state"] == "running");  // the test itself goes on; only its recording stopped
    CHECK(http(rig.p, "POST", "/api/v1/stop", "", rig.bearer).status == 200);
    // What was committed before is whole: frames from the run's start, no hole.
    const auto committed = at_full["frames_committed"].get<std::uint64_t>();
    CHECK(committed > 1000);
    CHECK(std::stoull(rig.sql("SELECT coalesce(sum(frame_count), 0) FROM frame_chunks WHERE run_id = 1;")) == committed);
    CHECK(rig.sql("SELECT min(first_index) FROM frame_chunks WHERE run_id = 1;") == "0\n");
    CHECK(rig.sql("PRAGMA integrity_check;") == "ok\n");
    CHECK(rig.d.stop() == 0);
    fs::remove_all(rig.dir);
}
