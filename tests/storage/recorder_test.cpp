// The recorder: everything pushed is stored after a flush and after a clean
// stop; commits come on time without a flush; a full inbox is counted and
// alarmed; the disk-space guard refuses new data and keeps the stored run.
#include <catch2/catch.hpp>

#include <bit>
#include <algorithm>
#include <mutex>
#include <thread>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/store.hpp"
#include "recorder_fixture.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;
using tensile::testing::TempDir;
using tensile::testing::frames_from;
using tensile::testing::new_run;
using tensile::testing::options_for;

TEST_CASE("the recorder stores frames, raw bytes, events, alarms and counters", "[recorder]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    auto opts = options_for(path);
    opts.chunk_frames = 1000;
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    Recorder& r = **rec;
    r.begin_run(run);
    const auto frames = frames_from(0, 25000);
    for (std::size_t i = 0; i < frames.size(); i += 500)
        REQUIRE(r.try_push(std::span<const Frame>(frames).subspan(i, 500)) == 500);
    REQUIRE(r.try_push_raw("load-cell", "184233100,1523.42 N\n", 0.25));
    REQUIRE(r.try_push_raw("load-cell", "184234100,1524.01 N\n", 0.26));
    REQUIRE(r.try_push_event(Event{EventKind::max_force, 20.0, 20000, 450.0, 0.18, 0, "Fm"}));
    REQUIRE(r.try_push_alarm(AlarmRecord{run, 5.0, "device_lost", "load cell silent for 2 s"}));
    REQUIRE(r.try_push_counter(CounterRecord{run, "load-cell", "bad_lines", 3, 6.0}));
    REQUIRE(r.flush().ok());

    auto c = r.counters();
    CHECK(c.frames_queued == 25000);
    CHECK(c.frames_written == 25000);
    CHECK(c.frames_committed == 25000);
    CHECK(c.frames_dropped == 0);
    CHECK(c.commits >= 1);
    CHECK(c.write_errors == 0);
    CHECK(c.frame_high_water > 0);

    auto store = Store::open(path);
    REQUIRE(store.ok());
    auto back = store->load_frames(run);
    REQUIRE(back.ok());
    REQUIRE(back->size() == frames.size());
    for (std::size_t i = 0; i < frames.size(); ++i) REQUIRE(std::bit_cast<std::uint64_t>((*back)[i].force_N) == std::bit_cast<std::uint64_t>(frames[i].force_N));
    auto record = store->load_run(run);
    REQUIRE(record->events.size() == 1);
    REQUIRE(record->alarms.size() == 1);
    REQUIRE(store->load_counters(run)->size() == 1);
    std::string raw;
    std::size_t arrivals = 0;
    REQUIRE(store->for_each_raw_chunk(run, [&](const RawChunk& ch) { raw += ch.bytes; arrivals += ch.arrivals.size(); }).ok());
    CHECK(raw == "184233100,1523.42 N\n184234100,1524.01 N\n");
    CHECK(arrivals == 2);

    SECTION("a clean stop stores what came after the last flush") {
        const auto more = frames_from(25000, 123);
        REQUIRE(r.try_push(more) == 123);
        r.end_run();
        r.stop();
        REQUIRE(store->load_frames(run)->size() == 25123);
    }
}

TEST_CASE("frames are committed on the clock, without a flush", "[recorder]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    auto rec = Recorder::start(options_for(path));
    REQUIRE(rec.ok());
    (*rec)->begin_run(run);
    REQUIRE((*rec)->try_push(frames_from(0, 300)) == 300);
    // DESIGN.md: frames are committed at least every 250 ms. Another connection
    // must see them well within that plus scheduling slack on a shared machine.
    auto reader = Store::open(path);
    REQUIRE(reader.ok());
    std::size_t seen = 0;
    const auto deadline = std::chrono::steady_clock::now() + std::chrono::milliseconds(600);
    while (seen < 300 && std::chrono::steady_clock::now() < deadline) {
        std::this_thread::sleep_for(std::chrono::milliseconds(20));
        seen = reader->load_frames(run)->size();
    }
    REQUIRE(seen == 300);
}

TEST_CASE("a full inbox drops frames, counts them and writes an alarm", "[recorder]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    auto opts = options_for(path);
    opts.frame_capacity = 1000;
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    (*rec)->begin_run(run);
    // One push larger than the inbox: the writer cannot drain it in between.
    REQUIRE((*rec)->try_push(frames_from(0, 1500)) == 1000);
    REQUIRE((*rec)->flush().ok());
    auto c = (*rec)->counters();
    CHECK(c.frames_dropped == 500);
    CHECK(c.frame_high_water == 1000);
    CHECK(c.frames_written == 1000);
    auto store = Store::open(path);
    auto alarms = store->load_alarms(run);
    REQUIRE(alarms.ok());
    REQUIRE(alarms->size() == 1);
    CHECK(alarms->at(0).kind == "queue_full");
    CHECK_THAT(alarms->at(0).message, Catch::StartsWith("500 frames dropped"));
}

TEST_CASE("below the free-space minimum, recording stops with an alarm and stored data stays", "[recorder]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    {
        auto rec = Recorder::start(options_for(path));
        REQUIRE(rec.ok());
        (*rec)->begin_run(run);
        REQUIRE((*rec)->try_push(frames_from(0, 2000)) == 2000);
        (*rec)->end_run();
    }
    auto opts = options_for(path);
    opts.min_free_bytes = std::uint64_t{1} << 62;  // more than any disk has
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    (*rec)->begin_run(run);
    REQUIRE((*rec)->try_push(frames_from(2000, 700)) == 700);  // the inbox takes them; the writer refuses them
    REQUIRE((*rec)->try_push_raw("load-cell", "2700,13500.00 N\n", 2.7));
    REQUIRE((*rec)->flush().ok());
    auto c = (*rec)->counters();
    CHECK(c.disk_low);
    CHECK(c.frames_refused_disk == 700);
    CHECK(c.raw_bytes_refused == 16);  // "2700,13500.00 N\n"
    CHECK(c.raw_bytes_written == 0);
    auto store = Store::open(path);
    REQUIRE(store->load_frames(run)->size() == 2000);
    // The guard may trip before the run is opened on the writer, so the alarm
    // is tied to the run or to none.
    auto alarms = store->load_alarms(run);
    auto unbound = store->load_alarms(std::nullopt);
    alarms->insert(alarms->end(), unbound->begin(), unbound->end());
    REQUIRE(alarms->size() == 1);
    CHECK(alarms->at(0).kind == "disk_low");
    auto check = store->db().prepare("PRAGMA integrity_check");
    REQUIRE(*check->step());
    CHECK(check->text(0) == "ok");
}

TEST_CASE("a database that cannot grow stops recording with an alarm and keeps what it stored", "[recorder]") {
    // A size-limited database stands in for a disk that fills before the
    // free-space guard sees it (SQLite answers SQLITE_FULL either way).
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    auto opts = options_for(path);
    opts.chunk_frames = 1000;
    opts.max_database_bytes = 1u << 20;  // 1 MiB
    std::vector<std::string> alarms_seen;
    std::mutex seen_mutex;
    opts.notify = [&](const std::string& kind, const std::string&) {
        std::lock_guard lock(seen_mutex);
        alarms_seen.push_back(kind);
    };
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    Recorder& r = **rec;
    r.begin_run(run);
    // Raw bytes that do not compress fill the file quickly; frames come with them.
    std::string noise(4096, '\0');
    std::uint64_t x = 88172645463325252ull;
    std::size_t pushed = 0;
    for (std::size_t k = 0; k < 600; ++k) {
        for (char& c : noise) {
            x ^= x << 13, x ^= x >> 7, x ^= x << 17;  // xorshift64 (Marsaglia 2003)
            c = static_cast<char>(x);
        }
        (void)r.try_push_raw("load-cell", noise, 0.001 * static_cast<double>(k));
        pushed += r.try_push(frames_from(pushed, 100));
        if (k % 50 == 49) (void)r.flush();
    }
    (void)r.flush();
    const auto c = r.counters();
    CHECK(c.frames_refused_disk > 0);
    CHECK(c.raw_bytes_refused > 0);
    {
        std::lock_guard lock(seen_mutex);
        CHECK(std::count(alarms_seen.begin(), alarms_seen.end(), "disk_full") == 1);
    }
    r.stop();
    // What was committed before the database filled is intact and readable.
    auto store = Store::open(path);
    REQUIRE(store.ok());
    const auto stored = store->load_frames(run);
    REQUIRE(stored.ok());
    CHECK(stored->size() > 0);
    CHECK(stored->size() + c.frames_refused_disk == pushed);
    for (std::size_t i = 0; i < stored->size(); ++i) REQUIRE((*stored)[i].force_N == 5.0 * static_cast<double>(i));
    auto check = store->db().prepare("PRAGMA integrity_check");
    REQUIRE(*check->step());
    CHECK(check->text(0) == "ok");
}

// Quick packing is ours to choose, so its check is the reference decoder's:
// every chunk, quick or thorough, must read back to the bytes that came in.
TEST_CASE("a writer that falls behind packs raw bytes quickly, and every byte still reads back", "[recorder]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    const auto run = new_run(path);
    auto opts = options_for(path);
    opts.frame_capacity = 4096;
    opts.raw_chunk_bytes = 1024;
    auto rec = Recorder::start(opts);
    REQUIRE(rec.ok());
    Recorder& r = **rec;
    r.begin_run(run);
    std::string sent;
    char line[64];
    std::size_t pushed = 0;
    const auto send_text = [&](int lines, double at) {
        std::string piece;
        for (int i = 0; i < lines; ++i) {
            std::snprintf(line, sizeof line, "%zu,%.3f N,%.4f mm\n", sent.size() + piece.size(), 1523.4 + i, 0.0125 * i);
            piece += line;
        }
        REQUIRE(r.try_push_raw("load-cell", piece, at));
        sent += piece;
    };
    SECTION("at a real pace every chunk is packed thoroughly") {
        for (int i = 0; i < 40; ++i) {
            pushed += r.try_push(std::span<const Frame>(frames_from(pushed, 10)));
            send_text(20, 0.01 * i);
            std::this_thread::sleep_for(std::chrono::milliseconds(5));
        }
        REQUIRE(r.flush().ok());
        CHECK(r.counters().raw_chunks_packed > 0);
        CHECK(r.counters().raw_chunks_quick == 0);
    }
    SECTION("bursts that fill the inbox past a quarter are packed quickly") {
        for (int i = 0; i < 40; ++i) {
            pushed += r.try_push(std::span<const Frame>(frames_from(pushed, 2000)));
            send_text(60, 0.01 * i);
            std::this_thread::sleep_for(std::chrono::milliseconds(15));  // the writer takes each burst whole
        }
        REQUIRE(r.flush().ok());
        const auto c = r.counters();
        CHECK(c.raw_chunks_quick > 0);
        CHECK(c.frames_dropped == 0);
        CHECK(c.frames_committed == pushed);
    }
    r.end_run();
    r.stop();
    auto store = Store::open(path);
    REQUIRE(store.ok());
    std::string back;
    REQUIRE(store->for_each_raw_chunk(run, [&](const RawChunk& ch) { back += ch.bytes; }).ok());
    CHECK(back == sent);
}
