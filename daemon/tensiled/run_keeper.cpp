// Runs into the database; see run_keeper.hpp.
#include "run_keeper.hpp"

#include <chrono>
#include <stdexcept>
#if defined(__GLIBC__)
#include <malloc.h>
#endif

#include "daemon/offline/results_json.hpp"
#include "daemon/offline/specimen_json.hpp"

namespace tensile {

double unix_now_s() {
    return std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}

namespace {
storage::RunState stored(RunState s) {
    switch (s) {
        case RunState::armed: return storage::RunState::armed;
        case RunState::running: return storage::RunState::running;
        case RunState::finished: return storage::RunState::finished;
        case RunState::aborted: return storage::RunState::aborted;
        case RunState::interrupted: return storage::RunState::interrupted;
        case RunState::faulted: return storage::RunState::faulted;
        case RunState::idle: break;
    }
    return storage::RunState::aborted;
}
}  // namespace

namespace {
// The control thread's waits for the write lock: short, so a lock held by
// another process refuses an arm quickly instead of freezing the monitor.
constexpr int control_lock_wait_ms = 300;
// The recorder's wait per try; it tries again until the lock goes.
constexpr int recorder_lock_wait_ms = 250;
// How long the end of a run waits for its close to be committed.
constexpr auto close_wait = std::chrono::seconds(2);

std::string locked_message(const std::filesystem::path& db, const std::string& why) {
    return "the database " + db.string() + " cannot be written: " + why +
           " (another process holds its write lock, e.g. an open sqlite3 session or a backup); "
           "no run is armed until it can be written; close that program and arm again";
}

// A run's buffers (frame batches, raw chunks, the analyzer's history: tens
// of MB for a long run at a high rate) are freed when it ends, but glibc
// keeps freed pages in its arenas for the next allocation. Handing the
// pages it holds free back to the system between runs keeps them from
// staying with an idle daemon. (They were not the cause of the soak's slow
// rise in memory: that was the run list reply, bench/hardening-results.md 13.)
void release_free_memory() {
#if defined(__GLIBC__)
    malloc_trim(0);
#endif
}
}  // namespace

RunKeeper::RunKeeper(const std::filesystem::path& database, double min_free_mb, std::shared_ptr<spdlog::logger> log,
                     Notify notify, std::size_t backlog_mb, double max_database_mb)
    : path_(database), log_(std::move(log)) {
    std::error_code ec;
    std::filesystem::create_directories(path_.parent_path(), ec);
    auto store = storage::Store::open(path_.string());
    if (!store) throw std::runtime_error("cannot open the database " + path_.string() + ": " + store.error());
    store_.emplace(std::move(*store));
    if (auto recovered = store_->recover_interrupted_runs(unix_now_s()); !recovered)
        log_->error("runs left open by a daemon that stopped could not be closed as interrupted: {}; "
                    "they will be at the next start", recovered.error());
    else if (*recovered > 0)
        log_->warn("{} run(s) left open by a daemon that stopped were closed as interrupted", *recovered);
    store_->db().set_busy_timeout(control_lock_wait_ms);
    storage::RecorderOptions options;
    options.path = path_.string();
    options.min_free_bytes = static_cast<std::uint64_t>(min_free_mb * 1024 * 1024);
    options.open.busy_timeout_ms = recorder_lock_wait_ms;
    options.backlog_bytes = backlog_mb << 20;
    options.max_database_bytes = static_cast<std::uint64_t>(max_database_mb * 1024 * 1024);
    options.log = log_;
    options.notify = std::move(notify);
    auto recorder = storage::Recorder::start(options);
    if (!recorder) throw std::runtime_error("cannot start the recorder on " + path_.string() + ": " + recorder.error());
    recorder_ = std::move(*recorder);
    log_->info("runs are kept in {}", path_.string());
}

RunKeeper::~RunKeeper() { stop(); }

void RunKeeper::stop() {
    if (recorder_) recorder_->stop();
}

Result<bool> RunKeeper::writable() {
    auto& db = store_->db();
    if (auto s = db.exec("BEGIN IMMEDIATE"); !s) return Error{locked_message(path_, s.error())};
    (void)db.exec("ROLLBACK");
    if (const auto c = recorder_->counters(); c.db_locked)
        return Error{locked_message(path_, "the recorder is still waiting for the lock")};
    return true;
}

Result<bool> RunKeeper::armed(const RunInfo& run, const RunSettings& settings, const std::string& config_text) {
    storage::NewRun n;
    auto specimen = to_json(run.specimen);
    specimen["S0_mm2"] = run.geometry.S0_mm2;
    specimen["L0_mm"] = run.geometry.L0_mm;
    n.specimen_json = specimen.dump();
    n.material = run.specimen.material.empty() ? run.specimen.label : run.specimen.material;
    auto profile = to_json(settings.profile);
    profile["preload_N"] = settings.preload_N;
    profile["tare_frames"] = settings.tare_frames;
    n.profile_json = profile.dump();
    n.config_snapshot = config_text;
    n.created_unix_s = unix_now_s();
    auto id = store_->create_run(n);
    if (!id) {
        log_->error("cannot store run {}: {}", run.number, id.error());
        run_id_.reset();
        return Error{locked_message(path_, id.error())};
    }
    run_id_ = *id;
    dropped_at_arming_ = recorder_->counters().frames_dropped;
    recorder_->begin_run(*id);
    log_->info("run {} is stored as run id {}", run.number, *id);
    return true;
}

void RunKeeper::step(const RunInfo&, const RunOutput& out) {
    if (!run_id_) return;
    if (!out.frames.empty()) recorder_->try_push(std::span<const Frame>(out.frames));
    for (const auto& e : out.events) recorder_->try_push_event(e);
    for (const auto& t : out.transitions) {
        if (!live(t.to)) continue;  // the end is filed by ended()
        // In order with the run's data, and never waiting on a lock here.
        recorder_->set_state(*run_id_, stored(t.to), t.cause, unix_now_s());
    }
}

void RunKeeper::started(const RunController& controller) {
    if (!run_id_) return;
    const double now = unix_now_s();
    const double* tare = controller.tare();
    const std::pair<const char*, double> values[] = {{"armed_at_s", controller.armed_at()},
                                                      {"tare_force_N", tare[0]},
                                                      {"tare_extension_mm", tare[1]},
                                                      {"tare_crosshead_mm", tare[2]}};
    for (const auto& [name, value] : values) recorder_->try_push_counter({run_id_, "run", name, value, now});
}

void RunKeeper::sources_at_end(const std::vector<Acquisition::SourceStatus>& status) {
    if (!run_id_) return;
    const double now = unix_now_s();
    for (const auto& s : status) {
        drivers::ParserCounters before;
        for (const auto& a : at_arming_)
            if (a.name == s.name) before = a.counters;
        const auto& c = s.counters.stream;
        const auto& b = before.stream;
        std::uint64_t nan = 0, over = 0, range = 0, good = 0;
        for (std::size_t ch = 0; ch < s.counters.channels.size(); ++ch) {
            const auto& x = s.counters.channels[ch];
            const drivers::ChannelCounters y = ch < before.channels.size() ? before.channels[ch] : drivers::ChannelCounters{};
            good += x.good - y.good;
            nan += x.nan - y.nan;
            over += x.overload - y.overload;
            range += x.out_of_range - y.out_of_range;
        }
        const std::pair<const char*, std::uint64_t> values[] = {
            {"bytes", c.bytes - b.bytes},
            {"records", c.records - b.records},
            {"bad_records", c.bad_records - b.bad_records},
            {"resync_bytes", c.resync_bytes - b.resync_bytes},
            {"checksum_failures", c.checksum_failures - b.checksum_failures},
            {"lost_frames", c.lost_frames - b.lost_frames},
            {"good_samples", good},
            {"nan", nan},
            {"overload", over},
            {"out_of_range", range}};
        for (const auto& [name, value] : values)
            recorder_->try_push_counter({run_id_, s.name, name, static_cast<double>(value), now});
        log_->info("run id {} source {}: {} bytes, {} records, {} bad records, {} resync bytes, {} checksum failures, "
                   "{} lost frames, {} nan, {} overload, {} out of range",
                   *run_id_, s.name, c.bytes - b.bytes, c.records - b.records, c.bad_records - b.bad_records,
                   c.resync_bytes - b.resync_bytes, c.checksum_failures - b.checksum_failures,
                   c.lost_frames - b.lost_frames, nan, over, range);
    }
}

void RunKeeper::raw(const std::string& source, std::span<const std::byte> bytes, double arrival_s) {
    if (!run_id_) return;
    recorder_->try_push_raw(source, std::string_view(reinterpret_cast<const char*>(bytes.data()), bytes.size()),
                            arrival_s);
}

void RunKeeper::alarm(const std::string& kind, const std::string& message) {
    storage::AlarmRecord a;
    a.run_id = run_id_;
    a.unix_s = unix_now_s();
    a.kind = kind;
    a.message = message;
    recorder_->try_push_alarm(a);
}

void RunKeeper::ended(const RunInfo& run, RunState end, const Results& results) {
    if (!run_id_) return;
    const auto id = *run_id_;
    run_id_.reset();
    // Frames the recorder had to drop (its queue full, e.g. through a long
    // lock) leave a gap in the stored curve: the stored run says so.
    auto state = stored(end);
    std::string cause = "run " + std::string(name_of(end));
    const std::uint64_t dropped = recorder_->counters().frames_dropped - dropped_at_arming_;
    if (dropped > 0) {
        state = storage::RunState::faulted;
        cause = std::to_string(dropped) + " frames of this run could not be stored (recorder queue full: database " +
                "locked or too slow); the stored curve has gaps; the run itself ended " + name_of(end);
        log_->error("run {} (id {}): {}", run.number, id, cause);
    }
    // Everything the recorder holds goes in before the digest is taken, in
    // the recorder's own transaction; through a lock it finishes later.
    recorder_->end_run();
    auto done = recorder_->finish_run(id, state, cause, unix_now_s(), to_json(results).dump());
    if (done.wait_for(close_wait) != std::future_status::ready) {
        // Not an error by itself: a long flat-out run takes seconds to seal
        // (its digest reads every frame back). Say which case this is.
        if (recorder_->counters().db_locked)
            log_->warn("run {} (id {}) ended {}; the database is locked, so it will be stored as soon as the lock is "
                       "released", run.number, id, name_of(state));
        else
            log_->info("run {} (id {}) ended {}; still being written and sealed, it is stored when that is done",
                       run.number, id, name_of(state));
        return;
    }
    if (auto s = done.get(); !s)
        log_->error("cannot close run {}: {}", id, s.error());
    else
        log_->info("run {} (id {}) stored: {}", run.number, id, name_of(state));
    release_free_memory();
}

}  // namespace tensile
