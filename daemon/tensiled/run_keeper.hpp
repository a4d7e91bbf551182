// Keeps every run in the database: opens the store at start (runs left live
// by a daemon that died become interrupted), starts the recorder's writer
// thread, and files what the rig reports: the run at arming (specimen,
// profile, config text, software version), frames, raw bytes, events and
// alarms through the recorder's bounded queue (never waiting on the disk),
// and at the end the results, final state and digest.
//
// Error policy: opening is start-up (throws std::runtime_error with the
// file). Arming is refused (writable(), armed() return an error naming the
// file) while the database cannot be written, so no run starts unrecorded.
// During a run, writes go through the recorder, which holds them through a
// lock taken by another process and raises alarms (notify); a run that lost
// frames that way is closed as faulted, saying how many. Nothing here blocks
// the control thread for long: the close waits at most `close_wait` and is
// otherwise finished by the recorder when the lock goes.
#pragma once

#include <cstdint>
#include <functional>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>

#include <spdlog/spdlog.h>

#include "daemon/storage/recorder.hpp"
#include "daemon/storage/store.hpp"
#include "rig_service.hpp"

namespace tensile {

class RunKeeper {
public:
    using Notify = std::function<void(const std::string& kind, const std::string& message)>;
    // `notify` hears the recorder's alarms (database locked...) on the writer
    // thread; pass it on to the control thread.
    RunKeeper(const std::filesystem::path& database, double min_free_mb, std::shared_ptr<spdlog::logger> log,
              Notify notify = {}, std::size_t backlog_mb = 12, double max_database_mb = 0);
    ~RunKeeper();

    // Whether a new run could be stored now: the write lock is free (waits
    // briefly for it). The error names the file and what holds it.
    Result<bool> writable();
    Result<bool> armed(const RunInfo& run, const RunSettings& settings, const std::string& config_text);
    void step(const RunInfo& run, const RunOutput& out);
    // The run started: its arming time (host monotonic) and tare, which
    // verification needs to rebuild the frames from the raw bytes.
    void started(const RunController& controller);
    void raw(const std::string& source, std::span<const std::byte> bytes, double arrival_s);
    void alarm(const std::string& kind, const std::string& message);
    // Parser counters of each source: a snapshot at arming, and at the end the
    // difference is filed with the run (bad bytes, lost frames... of this run).
    void sources_at_arming(const std::vector<Acquisition::SourceStatus>& status) { at_arming_ = status; }
    void sources_at_end(const std::vector<Acquisition::SourceStatus>& status);
    void ended(const RunInfo& run, RunState end, const Results& results);
    void stop();

    [[nodiscard]] std::optional<std::int64_t> current_run() const { return run_id_; }
    [[nodiscard]] storage::RecorderCounters counters() const { return recorder_->counters(); }
    [[nodiscard]] const std::filesystem::path& database() const { return path_; }
    // The control thread's own connection, for reads by the monitor.
    storage::Store& store() { return *store_; }

private:
    std::filesystem::path path_;
    std::shared_ptr<spdlog::logger> log_;
    std::optional<storage::Store> store_;
    std::unique_ptr<storage::Recorder> recorder_;
    std::optional<std::int64_t> run_id_;
    std::vector<Acquisition::SourceStatus> at_arming_;
    std::uint64_t dropped_at_arming_ = 0;
};

// Wall-clock seconds since 1970, for stored times.
double unix_now_s();

}  // namespace tensile
