// The run database: schema and migrations, owner-only files, bound parameters,
// the run lifecycle, queries, and the SHA-256 digest checked against coreutils'
// sha256sum (an independent implementation of FIPS 180-4).
#include <catch2/catch.hpp>

#include <bit>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sys/stat.h>

#include "daemon/storage/frame_codec.hpp"
#include "daemon/storage/store.hpp"
#include "tests/support/process.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;
using tensile::testing::TempDir;

namespace {

Store open_store(const std::string& path) {
    auto s = Store::open(path);
    INFO((s ? "" : s.error()));
    REQUIRE(s.ok());
    return std::move(*s);
}

std::int64_t new_run(Store& store, const std::string& material, double created, RunState state = RunState::armed) {
    NewRun r;
    r.specimen_json = R"({"label":"demo-1","material":")" + material + R"("})";
    r.material = material;
    r.profile_json = R"({"offsets":[0.2]})";
    r.config_snapshot = "[rig]\nname = \"demo\"\n";
    r.state = state;
    r.created_unix_s = created;
    auto id = store.create_run(r);
    REQUIRE(id.ok());
    return *id;
}

std::vector<Frame> ramp(std::size_t n, double t0 = 0.0) {
    std::vector<Frame> f(n);
    for (std::size_t i = 0; i < n; ++i)
        f[i] = Frame{t0 + static_cast<double>(i) * 0.01, 100.0 * static_cast<double>(i), i % 10 == 0 ? absent : 0.001 * static_cast<double>(i), 0.002 * static_cast<double>(i)};
    return f;
}

void put_frames(Store& store, std::int64_t run, const std::vector<Frame>& frames, std::size_t per_chunk) {
    std::int64_t seq = 0;
    for (std::size_t i = 0; i < frames.size(); i += per_chunk) {
        const auto end = std::min(frames.size(), i + per_chunk);
        FrameChunkRow row{run, seq++, static_cast<std::int64_t>(i), static_cast<std::int64_t>(end - i), frames[i].time_s,
                          frames[end - 1].time_s, encode_frames(std::span<const Frame>(frames).subspan(i, end - i))};
        REQUIRE(store.write_frame_chunk(row).ok());
    }
}

std::string scalar_text(Store& store, const char* sql) {
    auto stmt = store.db().prepare(sql);
    REQUIRE(stmt.ok());
    auto row = stmt->step();
    REQUIRE(row.ok());
    REQUIRE(*row);
    return stmt->text(0);
}

}  // namespace

TEST_CASE("schema: current from an empty file, old files migrated, newer files refused", "[store]") {
    TempDir dir;
    SECTION("from nothing") {
        Store store = open_store(dir.file("runs.db"));
        REQUIRE(*read_schema_version(store.db()) == schema_version);
        REQUIRE(scalar_text(store, "PRAGMA journal_mode") == "wal");
        REQUIRE(scalar_text(store, "PRAGMA integrity_check") == "ok");
    }
    SECTION("from version 1 with a run in it") {
        const auto path = dir.file("old.db");
        {
            auto db = Db::open(path, true);
            REQUIRE(db.ok());
            REQUIRE(migrate(*db, 1).ok());
            REQUIRE(*read_schema_version(*db) == 1);
            REQUIRE(db->exec("INSERT INTO runs (specimen, profile, config_snapshot, software_version, state, created_unix_s) "
                             "VALUES ('{}', '{}', '', '0.0.1', 'finished', 1.0)").ok());
        }
        Store store = open_store(path);
        REQUIRE(*read_schema_version(store.db()) == schema_version);
        REQUIRE(scalar_text(store, "SELECT count(*) FROM verifications") == "0");
        auto runs = store.list_runs();
        REQUIRE(runs.ok());
        REQUIRE(runs->size() == 1);
    }
    SECTION("from a newer version") {
        const auto path = dir.file("new.db");
        {
            auto db = Db::open(path, true);
            REQUIRE(db->exec("PRAGMA user_version = 99").ok());
        }
        auto store = Store::open(path);
        REQUIRE_FALSE(store.ok());
        REQUIRE_THAT(store.error(), Catch::Contains("newer"));
    }
}

TEST_CASE("database files are owner-only", "[store]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    Store store = open_store(path);
    new_run(store, "S355", 1.0);  // a write, so the WAL file exists
    for (const std::string& f : {path, path + "-wal"}) {
        struct stat st {};
        REQUIRE(::stat(f.c_str(), &st) == 0);
        INFO(f);
        REQUIRE((st.st_mode & 0777) == 0600);
    }
    SECTION("a file found readable by others is narrowed") {
        const auto other = dir.file("loose.db");
        { std::ofstream touch(other); }
        ::chmod(other.c_str(), 0644);
        open_store(other);
        struct stat st {};
        REQUIRE(::stat(other.c_str(), &st) == 0);
        REQUIRE((st.st_mode & 0777) == 0600);
    }
}

TEST_CASE("text with SQL in it is stored and read back verbatim", "[store]") {
    TempDir dir;
    Store store = open_store(dir.file("runs.db"));
    const std::string nasty = "x'); DROP TABLE runs;--";
    NewRun r;
    r.specimen_json = nlohmann::json{{"label", nasty}}.dump();
    r.material = nasty;
    r.config_snapshot = nasty;
    auto id = store.create_run(r);
    REQUIRE(id.ok());
    REQUIRE(store.add_alarm({*id, 2.0, "operator_note", nasty}).ok());
    auto rec = store.load_run(*id);
    REQUIRE(rec.ok());
    REQUIRE(rec->summary.material == nasty);
    REQUIRE(rec->config_snapshot == nasty);
    REQUIRE(nlohmann::json::parse(rec->specimen_json)["label"] == nasty);
    REQUIRE(rec->alarms.at(0).message == nasty);
    RunFilter f;
    f.material_contains = "drop table";
    REQUIRE(store.list_runs(f)->size() == 1);
}

TEST_CASE("a run goes from armed to finished with its states, results, events and digest", "[store]") {
    TempDir dir;
    Store store = open_store(dir.file("runs.db"));
    const auto run = new_run(store, "DC04 steel", 1000.0);
    REQUIRE(store.set_state(run, RunState::running, "force passed the preload", 1001.0).ok());
    const auto frames = ramp(10000);
    put_frames(store, run, frames, 4096);
    Event e{EventKind::proof_strength, 12.5, 1250, 301.5, 0.0035, 0.2, "Rp0.2"};
    REQUIRE(store.add_event(run, e).ok());
    Results results;
    results.S0_mm2 = 20;
    results.L0_mm = 80;
    results.Rm_MPa = 412.0;
    REQUIRE(store.set_results(run, results).ok());
    REQUIRE(store.finish_run(run, RunState::finished, "settled after fracture", 1100.0).ok());

    auto rec = store.load_run(run);
    REQUIRE(rec.ok());
    CHECK(rec->summary.state == RunState::finished);
    CHECK(rec->summary.state_cause == "settled after fracture");
    CHECK(rec->summary.started_unix_s == 1001.0);
    CHECK(rec->summary.finished_unix_s == 1100.0);
    CHECK(rec->summary.digest_sha256.size() == 64);
    CHECK(rec->frame_count == 10000);
    REQUIRE(rec->states.size() == 3);
    CHECK(rec->states[1].state == RunState::running);
    REQUIRE(rec->events.size() == 1);
    CHECK(rec->events[0].kind == EventKind::proof_strength);
    CHECK(rec->events[0].label == "Rp0.2");
    CHECK(rec->events[0].stress_MPa == 301.5);
    CHECK(rec->events[0].frame == 1250);
    REQUIRE(rec->results_json);
    CHECK(nlohmann::json::parse(*rec->results_json)["Rm_MPa"] == 412.0);

    SECTION("a closed run cannot be closed or moved again") {
        REQUIRE_FALSE(store.finish_run(run, RunState::aborted, "again", 1200.0).ok());
        REQUIRE_FALSE(store.set_state(run, RunState::running, "again", 1200.0).ok());
    }
    SECTION("the digest changes when a stored frame is altered") {
        auto altered = frames;
        altered[5000].force_N = std::nextafter(altered[5000].force_N, 1e9);
        put_frames(store, run, altered, 4096);
        auto now = store.compute_digest(run);
        REQUIRE(now.ok());
        REQUIRE(*now != rec->summary.digest_sha256);
    }
}

TEST_CASE("the digest matches sha256sum over the documented layout", "[store]") {
    TempDir dir;
    Store store = open_store(dir.file("runs.db"));
    const auto run = new_run(store, "Cu", 1.0, RunState::running);
    const auto frames = ramp(50);
    put_frames(store, run, frames, 20);
    RawChunk raw{"load-cell", 0, "184233100,1523.42 N\n", {{10, 0.5}, {10, 0.75}}};
    REQUIRE(store.write_raw_chunk(run, raw, 0.5, 0.75).ok());

    // The layout from run_digest.cpp, written out by hand.
    std::string bytes = "tensiled run digest v1\n";
    auto u64 = [&](std::uint64_t v) { for (int i = 0; i < 8; ++i) bytes.push_back(static_cast<char>(v >> (8 * i))); };
    u64(raw.source.size()); bytes += raw.source;
    u64(raw.bytes.size()); bytes += raw.bytes;
    u64(2); u64(10); u64(std::bit_cast<std::uint64_t>(0.5)); u64(10); u64(std::bit_cast<std::uint64_t>(0.75));
    bytes += "frames\n";
    for (const Frame& f : frames)
        for (double v : {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm}) u64(std::bit_cast<std::uint64_t>(v));
    u64(frames.size());
    const auto file = dir.file("digest-input.bin");
    { std::ofstream(file, std::ios::binary) << bytes; }
    auto ran = tensile::testing::run_command("sha256sum " + file);
    REQUIRE(ran.code == 0);
    auto ours = store.compute_digest(run);
    REQUIRE(ours.ok());
    REQUIRE(ran.out.substr(0, 64) == *ours);
}

TEST_CASE("runs are listed by date, state and material", "[store]") {
    TempDir dir;
    Store store = open_store(dir.file("runs.db"));
    const auto a = new_run(store, "S355 structural steel", 100.0);
    const auto b = new_run(store, "6061-T6 aluminium", 200.0);
    const auto c = new_run(store, "s355 lot 9", 300.0);
    REQUIRE(store.finish_run(a, RunState::finished, "done", 150.0).ok());
    REQUIRE(store.finish_run(b, RunState::aborted, "operator", 250.0).ok());
    auto ids = [&](const RunFilter& f) {
        std::vector<std::int64_t> out;
        auto runs = store.list_runs(f);
        REQUIRE(runs.ok());
        for (const auto& r : *runs) out.push_back(r.id);
        return out;
    };
    CHECK(ids({}) == std::vector<std::int64_t>{c, b, a});
    RunFilter by_material;
    by_material.material_contains = "S355";
    CHECK(ids(by_material) == std::vector<std::int64_t>{c, a});
    RunFilter by_date;
    by_date.from_unix_s = 150.0;
    by_date.to_unix_s = 300.0;
    CHECK(ids(by_date) == std::vector<std::int64_t>{c, b});
    RunFilter by_state;
    by_state.state = RunState::aborted;
    CHECK(ids(by_state) == std::vector<std::int64_t>{b});
    RunFilter wildcard;
    wildcard.material_contains = "%";  // a plain character here, not a pattern
    CHECK(ids(wildcard).empty());
}

TEST_CASE("frames come back by time range, and buckets keep the peaks", "[store]") {
    TempDir dir;
    Store store = open_store(dir.file("runs.db"));
    const auto run = new_run(store, "S355", 1.0, RunState::running);
    auto frames = ramp(10000);  // t = 0 .. 99.99 s
    frames[4321].force_N = 1e7;  // a spike the plot must not lose
    put_frames(store, run, frames, 4096);

    auto all = store.load_frames(run);
    REQUIRE(all.ok());
    REQUIRE(all->size() == frames.size());
    for (std::size_t i = 0; i < frames.size(); ++i) REQUIRE(std::bit_cast<std::uint64_t>((*all)[i].extension_mm) == std::bit_cast<std::uint64_t>(frames[i].extension_mm));

    auto part = store.load_frames(run, 40.0, 42.0);
    REQUIRE(part.ok());
    REQUIRE(part->size() == 201);
    CHECK(part->front().time_s == frames[4000].time_s);
    CHECK(part->back().time_s == frames[4200].time_s);

    auto buckets = store.decimate(run, 100);
    REQUIRE(buckets.ok());
    REQUIRE(buckets->size() == 100);
    std::uint64_t total = 0;
    double peak = 0;
    for (const auto& b : *buckets) { total += b.count; peak = std::max(peak, b.force_max); }
    CHECK(total == frames.size());
    CHECK(peak == 1e7);
    CHECK((*buckets)[0].force_min == 0.0);
}

TEST_CASE("a run left open is closed as interrupted at start-up", "[store]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    std::int64_t run = 0;
    {
        Store store = open_store(path);
        run = new_run(store, "S355", 1.0, RunState::running);
        put_frames(store, run, ramp(100), 64);
    }
    Store store = open_store(path);
    auto n = store.recover_interrupted_runs(50.0);
    REQUIRE(n.ok());
    REQUIRE(*n == 1);
    auto rec = store.load_run(run);
    REQUIRE(rec->summary.state == RunState::interrupted);
    REQUIRE(rec->summary.state_cause == interrupted_cause);
    REQUIRE(rec->frame_count == 100);
    REQUIRE(rec->summary.digest_sha256.size() == 64);
    REQUIRE(rec->alarms.size() == 1);
    REQUIRE(*store.recover_interrupted_runs(60.0) == 0);
}
