// The run database: one SQLite connection with the run lifecycle, writes of
// run data, and the queries the monitor, tensilectl and verification need.
//
// Threading: a Store is one connection and belongs to one thread at a time
// (it may be moved to another thread, never shared). Open one Store per thread;
// WAL lets readers run beside the recorder's writer connection, and writes
// take the lock with BEGIN IMMEDIATE under a busy timeout.
//
// Error policy: open() is start-up and returns an error that names the file;
// every other call returns Status / Result with SQLite's message. Nothing
// throws. SQL takes values through bound parameters only.
#pragma once

#include <cstdint>
#include <functional>
#include <limits>
#include <span>
#include <string>
#include <vector>

#include "engine/frame.hpp"
#include "engine/results.hpp"
#include "raw_chunk.hpp"
#include "schema.hpp"
#include "sqlite_db.hpp"
#include "store_types.hpp"

namespace tensile::storage {

inline constexpr double all_time = std::numeric_limits<double>::infinity();

class Store {
public:
    static Result<Store> open(const std::string& path, const OpenOptions& options = {});

    // --- run lifecycle -------------------------------------------------------
    Result<std::int64_t> create_run(const NewRun& run);
    // Records the transition with its cause; running sets the start time and a
    // closed state the finish time. Closing should go through finish_run.
    Status set_state(std::int64_t run, RunState state, const std::string& cause, double unix_s);
    Status set_results(std::int64_t run, const Results& results);
    Status set_results_json(std::int64_t run, const std::string& json_text);
    // Closes the run (finished, aborted, faulted...): computes its SHA-256 over
    // raw bytes and frames and sets the state, in one transaction. Flush the
    // recorder first so the digest covers everything.
    Status finish_run(std::int64_t run, RunState state, const std::string& cause, double unix_s);
    // At daemon start: every run left armed/running becomes interrupted (with
    // its digest and an alarm). Returns how many. Never call it while a
    // recorder of this process is writing a live run.
    Result<int> recover_interrupted_runs(double unix_s);

    // --- writes (the recorder calls these inside its own transactions) ------
    // set_state / finish_run without their own transaction.
    Status write_state(std::int64_t run, RunState state, const std::string& cause, double unix_s);
    Status write_finish(std::int64_t run, RunState state, const std::string& cause, double unix_s);
    Status write_frame_chunk(const FrameChunkRow& row);  // insert or replace (run, seq)
    Status write_raw_chunk(std::int64_t run, const RawChunk& chunk, std::optional<double> first_s, std::optional<double> last_s);
    // A chunk already packed (the recorder packs on its writer thread).
    Status write_packed_raw(std::int64_t run, const std::string& source, std::int64_t seq, const PackedRaw& packed,
                            std::optional<double> first_s, std::optional<double> last_s);
    Status add_event(std::int64_t run, const Event& event);
    Status add_alarm(const AlarmRecord& alarm);
    Status add_counter(const CounterRecord& counter);

    // --- reads -----------------------------------------------------------------
    Result<std::vector<RunSummary>> list_runs(const RunFilter& filter = {});
    Result<RunRecord> load_run(std::int64_t run);
    Result<std::vector<AlarmRecord>> load_alarms(std::optional<std::int64_t> run);
    Result<std::vector<CounterRecord>> load_counters(std::int64_t run);
    // Frames with from_s <= time_s <= to_s, in recorded order. Frames whose time
    // is NaN are kept only when the whole run is asked for.
    Result<std::vector<Frame>> load_frames(std::int64_t run, double from_s = -all_time, double to_s = all_time);
    Status for_each_frame(std::int64_t run, double from_s, double to_s, const std::function<void(const Frame&)>& visit);
    Status for_each_raw_chunk(std::int64_t run, const std::function<void(const RawChunk&)>& visit);
    // `buckets` equal time slices over [from_s, to_s] (the run's span when infinite).
    Result<std::vector<Bucket>> decimate(std::int64_t run, std::size_t buckets, double from_s = -all_time, double to_s = all_time);
    // SHA-256 (hex) over the run's raw bytes and frames, as finish_run stores it.
    Result<std::string> compute_digest(std::int64_t run);

    Db& db() { return db_; }

private:
    explicit Store(Db db) : db_(std::move(db)) {}
    Result<Stmt*> cached(int slot, const char* sql);

    Db db_;
    std::vector<Stmt> stmts_;  // prepared once per connection, by slot
};

}  // namespace tensile::storage
