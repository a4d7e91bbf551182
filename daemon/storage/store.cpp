// Store: opening, run lifecycle and writes. Queries live in store_read.cpp,
// the digest in run_digest.cpp. Errors are values carrying SQLite's message.
#include "store.hpp"

#include <nlohmann/json.hpp>

#include "daemon/offline/results_json.hpp"

namespace tensile::storage {
namespace {

enum Slot : int {
    insert_chunk, insert_raw, insert_event, insert_alarm, insert_counter, insert_state, slot_count
};

bool is_closed(RunState s) { return !is_live(s); }

}  // namespace

const char* name_of(RunState state) {
    switch (state) {
        case RunState::armed: return "armed";
        case RunState::running: return "running";
        case RunState::finished: return "finished";
        case RunState::aborted: return "aborted";
        case RunState::interrupted: return "interrupted";
        case RunState::faulted: return "faulted";
    }
    return "?";
}

std::optional<RunState> parse_run_state(std::string_view name) {
    for (RunState s : {RunState::armed, RunState::running, RunState::finished, RunState::aborted, RunState::interrupted,
                       RunState::faulted})
        if (name == name_of(s)) return s;
    return std::nullopt;
}

Result<Store> Store::open(const std::string& path, const OpenOptions& options) {
    auto db = open_database(path, options);
    if (!db) return Error{db.error()};
    return Store(std::move(*db));
}

Result<Stmt*> Store::cached(int slot, const char* sql) {
    if (stmts_.size() < slot_count) stmts_.resize(slot_count);
    Stmt& s = stmts_[static_cast<std::size_t>(slot)];
    if (!s) {
        auto prepared = db_.prepare(sql);
        if (!prepared) return Error{prepared.error()};
        s = std::move(*prepared);
    }
    s.reset();
    return &s;
}

Result<std::int64_t> Store::create_run(const NewRun& run) {
    std::int64_t id = 0;
    auto status = in_transaction(db_, [&]() -> Status {
        auto stmt = db_.prepare(
            "INSERT INTO runs (specimen, material, profile, config_snapshot, software_version, state, state_cause, "
            "created_unix_s, started_unix_s) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)");
        if (!stmt) return Error{stmt.error()};
        stmt->bind(1, run.specimen_json).bind(2, run.material).bind(3, run.profile_json).bind(4, run.config_snapshot);
        stmt->bind(5, run.software_version).bind(6, name_of(run.state)).bind(7, run.cause).bind(8, run.created_unix_s);
        if (run.state == RunState::running) stmt->bind(9, run.created_unix_s);
        if (auto s = stmt->run(); !s) return s;
        id = db_.last_insert_id();
        auto change = cached(insert_state, "INSERT INTO state_changes (run_id, state, cause, unix_s) VALUES (?, ?, ?, ?)");
        if (!change) return Error{change.error()};
        (*change)->bind(1, id).bind(2, name_of(run.state)).bind(3, run.cause).bind(4, run.created_unix_s);
        return (*change)->run();
    });
    if (!status) return Error{status.error()};
    return id;
}

Status Store::set_state(std::int64_t run, RunState state, const std::string& cause, double unix_s) {
    if (is_closed(state)) return finish_run(run, state, cause, unix_s);
    return in_transaction(db_, [&]() -> Status { return write_state(run, state, cause, unix_s); });
}

Status Store::write_state(std::int64_t run, RunState state, const std::string& cause, double unix_s) {
    if (is_closed(state)) return write_finish(run, state, cause, unix_s);
    auto stmt = db_.prepare(
        "UPDATE runs SET state = ?1, state_cause = ?2, "
        "started_unix_s = CASE WHEN ?1 = 'running' AND started_unix_s IS NULL THEN ?3 ELSE started_unix_s END "
        "WHERE id = ?4 AND state IN ('armed', 'running')");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, name_of(state)).bind(2, cause).bind(3, unix_s).bind(4, run);
    if (auto s = stmt->run(); !s) return s;
    if (db_.changes() != 1) return Error{"run " + std::to_string(run) + " does not exist or is already closed"};
    auto change = cached(insert_state, "INSERT INTO state_changes (run_id, state, cause, unix_s) VALUES (?, ?, ?, ?)");
    if (!change) return Error{change.error()};
    (*change)->bind(1, run).bind(2, name_of(state)).bind(3, cause).bind(4, unix_s);
    return (*change)->run();
}

Status Store::set_results(std::int64_t run, const Results& results) {
    return set_results_json(run, to_json(results).dump());
}

Status Store::set_results_json(std::int64_t run, const std::string& json_text) {
    auto stmt = db_.prepare("UPDATE runs SET results = ? WHERE id = ?");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, json_text).bind(2, run);
    if (auto s = stmt->run(); !s) return s;
    if (db_.changes() != 1) return Error{"run " + std::to_string(run) + " does not exist"};
    return Done{};
}

Status Store::finish_run(std::int64_t run, RunState state, const std::string& cause, double unix_s) {
    if (is_live(state)) return Error{std::string("finish_run needs a closed state, not ") + name_of(state)};
    return in_transaction(db_, [&]() -> Status { return write_finish(run, state, cause, unix_s); });
}

Status Store::write_finish(std::int64_t run, RunState state, const std::string& cause, double unix_s) {
    if (is_live(state)) return Error{std::string("finish_run needs a closed state, not ") + name_of(state)};
    // Inside the write transaction nobody can add data between digest and close.
    auto digest = compute_digest(run);
    if (!digest) return Error{digest.error()};
    auto stmt = db_.prepare(
        "UPDATE runs SET state = ?, state_cause = ?, finished_unix_s = ?, digest_sha256 = ? "
        "WHERE id = ? AND state IN ('armed', 'running')");
    if (!stmt) return Error{stmt.error()};
    stmt->bind(1, name_of(state)).bind(2, cause).bind(3, unix_s).bind(4, *digest).bind(5, run);
    if (auto s = stmt->run(); !s) return s;
    if (db_.changes() != 1) return Error{"run " + std::to_string(run) + " does not exist or is already closed"};
    auto change = cached(insert_state, "INSERT INTO state_changes (run_id, state, cause, unix_s) VALUES (?, ?, ?, ?)");
    if (!change) return Error{change.error()};
    (*change)->bind(1, run).bind(2, name_of(state)).bind(3, cause).bind(4, unix_s);
    return (*change)->run();
}

Result<int> Store::recover_interrupted_runs(double unix_s) {
    std::vector<std::int64_t> open_runs;
    {
        auto stmt = db_.prepare("SELECT id FROM runs WHERE state IN ('armed', 'running') ORDER BY id");
        if (!stmt) return Error{stmt.error()};
        for (;;) {
            auto row = stmt->step();
            if (!row) return Error{row.error()};
            if (!*row) break;
            open_runs.push_back(stmt->int64(0));
        }
    }
    for (std::int64_t run : open_runs) {
        if (auto s = finish_run(run, RunState::interrupted, interrupted_cause, unix_s); !s) return Error{s.error()};
        AlarmRecord alarm{run, unix_s, "run_interrupted",
                          "run " + std::to_string(run) + " closed as interrupted at start-up: " + interrupted_cause};
        if (auto s = add_alarm(alarm); !s) return Error{s.error()};
    }
    return static_cast<int>(open_runs.size());
}

Status Store::write_frame_chunk(const FrameChunkRow& row) {
    // The recorder rewrites its last, partial chunk at each commit until it is
    // full, so a slow run still gets well-filled chunks and nothing waits.
    auto stmt = cached(insert_chunk,
                       "INSERT INTO frame_chunks (run_id, seq, first_index, frame_count, first_time_s, last_time_s, data) "
                       "VALUES (?, ?, ?, ?, ?, ?, ?) ON CONFLICT (run_id, seq) DO UPDATE SET "
                       "first_index = excluded.first_index, frame_count = excluded.frame_count, "
                       "first_time_s = excluded.first_time_s, last_time_s = excluded.last_time_s, data = excluded.data");
    if (!stmt) return Error{stmt.error()};
    (*stmt)->bind(1, row.run_id).bind(2, row.seq).bind(3, row.first_index).bind(4, row.frame_count);
    (*stmt)->bind(5, row.first_time_s).bind(6, row.last_time_s).bind_blob(7, row.data);
    return (*stmt)->run();
}

Status Store::write_raw_chunk(std::int64_t run, const RawChunk& chunk, std::optional<double> first_s, std::optional<double> last_s) {
    return write_packed_raw(run, chunk.source, chunk.seq, pack_raw(chunk), first_s, last_s);
}

Status Store::write_packed_raw(std::int64_t run, const std::string& source, std::int64_t seq, const PackedRaw& packed,
                               std::optional<double> first_s, std::optional<double> last_s) {
    auto stmt = cached(insert_raw,
                       "INSERT INTO raw_chunks (run_id, source, seq, first_time_s, last_time_s, bytes, arrivals, codec) "
                       "VALUES (?, ?, ?, ?, ?, ?, ?, ?)");
    if (!stmt) return Error{stmt.error()};
    (*stmt)->bind(1, run).bind(2, source).bind(3, seq).bind(4, first_s).bind(5, last_s);
    (*stmt)->bind_blob(6, packed.bytes).bind_blob(7, packed.arrivals).bind(8, packed.codec);
    return (*stmt)->run();
}

Status Store::add_event(std::int64_t run, const Event& e) {
    auto stmt = cached(insert_event,
                       "INSERT INTO events (run_id, kind, label, time_s, frame, stress_MPa, strain, value) "
                       "VALUES (?, ?, ?, ?, ?, ?, ?, ?)");
    if (!stmt) return Error{stmt.error()};
    (*stmt)->bind(1, run).bind(2, name_of(e.kind)).bind(3, e.label).bind(4, e.time_s);
    (*stmt)->bind(5, static_cast<std::int64_t>(e.frame)).bind(6, e.stress_MPa).bind(7, e.strain).bind(8, e.value);
    return (*stmt)->run();
}

Status Store::add_alarm(const AlarmRecord& a) {
    auto stmt = cached(insert_alarm, "INSERT INTO alarms (run_id, unix_s, kind, message) VALUES (?, ?, ?, ?)");
    if (!stmt) return Error{stmt.error()};
    (*stmt)->bind(1, a.run_id).bind(2, a.unix_s).bind(3, a.kind).bind(4, a.message);
    return (*stmt)->run();
}

Status Store::add_counter(const CounterRecord& c) {
    auto stmt = cached(insert_counter,
                       "INSERT INTO counters (run_id, source, name, value, unix_s) VALUES (?, ?, ?, ?, ?)");
    if (!stmt) return Error{stmt.error()};
    (*stmt)->bind(1, c.run_id).bind(2, c.source).bind(3, c.name).bind(4, c.value).bind(5, c.unix_s);
    return (*stmt)->run();
}

}  // namespace tensile::storage
