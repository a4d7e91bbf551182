// The recorder against a database whose write lock another connection holds
// (as an open sqlite3 session would): it keeps what it takes, raises an alarm
// at once, writes everything when the lock goes (nothing lost); a lock that
// outlasts the backlog and the inbox is a counted, alarmed loss; stopping
// while locked returns after a bounded wait and says what was not stored.
// The end-to-end version against the real tensiled is in tests/hardening.
#include <catch2/catch.hpp>

#include <mutex>
#include <thread>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/schema.hpp"
#include "daemon/storage/store.hpp"
#include "recorder_fixture.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;
using tensile::testing::TempDir;
using tensile::testing::frames_from;
using tensile::testing::new_run;

namespace {

// Another connection holding the write lock until release().
class LockHolder {
public:
    explicit LockHolder(const std::string& path) {
        auto db = open_database(path);
        REQUIRE(db.ok());
        db_.emplace(std::move(*db));
        REQUIRE(db_->exec("BEGIN EXCLUSIVE").ok());
    }
    void release() { REQUIRE(db_->exec("COMMIT").ok()); }

private:
    std::optional<Db> db_;
};

struct Alarms {
    std::mutex m;
    std::vector<std::string> kinds;
    void add(const std::string& kind) { std::lock_guard l(m); kinds.push_back(kind); }
    bool has(const std::string& kind) {
        std::lock_guard l(m);
        return std::find(kinds.begin(), kinds.end(), kind) != kinds.end();
    }
};

template <class F>
bool wait_until(F ready, double seconds) {
    const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
    while (!ready() && std::chrono::steady_clock::now() < until) std::this_thread::sleep_for(std::chrono::milliseconds(10));
    return ready();
}

RecorderOptions options_for(const std::string& path, Alarms& alarms) {
    RecorderOptions o = tensile::testing::options_for(path);
    o.open.busy_timeout_ms = 50;
    o.chunk_frames = 1000;
    o.notify = [&alarms](const std::string& kind, const std::string&) { alarms.add(kind); };
    return o;
}

}  // namespace

TEST_CASE("a lock held by another connection mid-run: alarm at once, nothing lost once it goes", "[recorder][lock]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    Alarms alarms;
    auto rec = Recorder::start(options_for(path, alarms));
    REQUIRE(rec.ok());
    Recorder& r = **rec;
    r.begin_run(run);
    r.try_push(std::span<const Frame>(frames_from(0, 3000)));
    REQUIRE(r.flush().ok());
    CHECK(r.counters().frames_committed == 3000);  // nothing lost before the fault

    LockHolder lock(path);
    std::size_t pushed = 3000;
    // 2 s of a 5 kHz stream while the lock is held, with events and a state change.
    for (int i = 0; i < 200; ++i) {
        pushed += r.try_push(std::span<const Frame>(frames_from(pushed, 50)));
        if (i == 100) {
            Event e;
            e.kind = EventKind::max_force;
            e.label = "Fm";
            e.time_s = 3.1;
            r.try_push_event(e);
        }
        std::this_thread::sleep_for(std::chrono::milliseconds(10));
    }
    r.set_state(run, RunState::running, "preload passed", 1.0);
    CHECK(wait_until([&] { return r.counters().db_locked; }, 2));
    CHECK(alarms.has("database_locked"));
    const auto during = r.counters();
    CHECK(during.frames_committed == 3000);   // nothing could be written...
    CHECK(during.frames_dropped == 0);        // ...and nothing was dropped
    CHECK(during.backlog_bytes > 0);
    CHECK(during.lock_episodes == 1);
    CHECK(during.db_locked_s > 0.5);

    lock.release();
    CHECK(wait_until([&] { return !r.counters().db_locked; }, 3));
    r.end_run();
    auto closed = r.finish_run(run, RunState::finished, "run finished", 2.0, std::string(R"({"Rm_MPa": 512})"));
    REQUIRE(closed.wait_for(std::chrono::seconds(5)) == std::future_status::ready);
    REQUIRE(closed.get().ok());
    CHECK(alarms.has("database_unlocked"));
    const auto after = r.counters();
    CHECK(after.frames_committed == pushed);
    CHECK(after.frames_dropped == 0);
    CHECK(after.write_errors == 0);
    CHECK(after.backlog_bytes == 0);
    r.stop();

    auto store = Store::open(path);
    REQUIRE(store.ok());
    const auto frames = store->load_frames(run);
    REQUIRE(frames.ok());
    REQUIRE(frames->size() == pushed);
    for (std::size_t i = 0; i < frames->size(); ++i) REQUIRE((*frames)[i].force_N == 5.0 * static_cast<double>(i));
    const auto stored = store->load_run(run);
    REQUIRE(stored.ok());
    CHECK(stored->summary.state == RunState::finished);
    CHECK(stored->events.size() == 1);
    auto all = store->load_alarms(run);
    REQUIRE(all.ok());
    std::vector<std::string> kinds;
    for (const auto& a : *all) kinds.push_back(a.kind);
    CHECK(kinds == std::vector<std::string>{"database_locked", "database_unlocked"});
}

TEST_CASE("a lock that outlasts the backlog and the queue: frames dropped, counted and alarmed, never silently",
          "[recorder][lock]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    Alarms alarms;
    auto opts = options_for(path, alarms);
    opts.frame_capacity = 2000;
    opts.backlog_bytes = 1;  // the first closed chunk fills it
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    Recorder& r = **rec;
    r.begin_run(run);
    std::optional<LockHolder> lock(std::in_place, path);
    std::size_t pushed = 0, accepted = 0;
    for (int i = 0; i < 100; ++i) {
        accepted += r.try_push(std::span<const Frame>(frames_from(pushed, 100)));
        pushed += 100;
        std::this_thread::sleep_for(std::chrono::milliseconds(5));
    }
    const auto during = r.counters();
    CHECK(during.db_locked);
    CHECK(during.frames_dropped == pushed - accepted);
    CHECK(during.frames_dropped > 0);
    lock->release();
    REQUIRE(r.flush().ok());
    CHECK(alarms.has("queue_full"));
    CHECK(r.counters().frames_committed == accepted);
    r.stop();
    auto store = Store::open(path);
    REQUIRE(store.ok());
    CHECK(store->load_frames(run)->size() == accepted);
    bool said = false;
    const auto alarms_stored = store->load_alarms(run);  // kept: a loop over *temporary would dangle
    REQUIRE(alarms_stored.ok());
    for (const auto& a : *alarms_stored)
        if (a.kind == "queue_full" && a.message.find("locked by another process") != std::string::npos) said = true;
    CHECK(said);
}

TEST_CASE("stopping while the lock is held returns within a bounded time and counts the loss", "[recorder][lock]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    Alarms alarms;
    auto rec = Recorder::start(options_for(path, alarms));
    REQUIRE(rec.ok());
    (*rec)->begin_run(run);
    LockHolder lock(path);
    (*rec)->try_push(std::span<const Frame>(frames_from(0, 500)));
    CHECK(wait_until([&] { return (*rec)->counters().db_locked; }, 2));
    const auto t0 = std::chrono::steady_clock::now();
    (*rec)->stop();
    const double took = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    CHECK(took < 4.0);
    CHECK((*rec)->counters().write_errors >= 1);
    CHECK((*rec)->counters().frames_committed == 0);
    lock.release();
}
