// The recorder: writes a run's frames, raw bytes, events, alarms and counters
// to the database on its own thread, behind a bounded inbox, so acquisition
// never waits on the disk.
//
// - Frames are packed into chunks (frame_codec.hpp); the last, partial chunk is
//   rewritten at every commit until full, so every commit holds every frame
//   taken so far. Commits come at least every `commit_interval` (default
//   200 ms, under the 250 ms rule with room for the commit itself).
// - A full inbox refuses and counts; the writer turns every new count into an
//   alarm row, so a drop is never silent.
// - Disk-space guard: free space on the database's file system is checked every
//   `disk_check_interval`; below `min_free_bytes` frames and raw bytes are
//   refused (counted), an alarm is written, and what is stored stays as it is.
//   Recording resumes, with an alarm, once space is back above the minimum.
// - A database that cannot grow (SQLITE_FULL: the disk filled before the guard
//   saw it, or `max_database_bytes` was reached): the frames and raw bytes not
//   yet committed are given up and counted, a `disk_full` alarm is raised, and
//   the run takes no more of them; states, events, alarms and the run's close
//   stay in the backlog and are tried again. What was committed stays intact.
// - Another process holding the database's write lock (an open sqlite3 session,
//   a backup tool): the writer keeps everything since its last commit in memory
//   (the backlog, up to `backlog_bytes`), raises a `database_locked` alarm,
//   tries again every `poll_interval` (each try waits the connection's busy
//   timeout) and writes the backlog in one transaction when the lock goes, with
//   a `database_unlocked` alarm: nothing is lost. Past `backlog_bytes` it stops
//   taking from the inbox, which then fills and refuses (counted, `queue_full`
//   alarm): a lock that outlasts both is a loud loss, never a silent one.
//   Alarms reach `notify` (from the writer thread) as soon as they are raised,
//   and the database once it can be written.
//
// Threading: the try_* calls and begin_run/end_run may come from any thread
// and never block on the disk. flush() and stop() block the caller until the
// writer has committed; call them from the control thread, never from
// acquisition.
// Error policy: start() is start-up and returns an error value; afterwards
// write failures are counted (write_errors), logged, and the writer goes on.
#pragma once

#include <atomic>
#include <chrono>
#include <cstdint>
#include <functional>
#include <memory>
#include <span>
#include <string>
#include <string_view>
#include <thread>

#include "recorder_inbox.hpp"
#include "schema.hpp"

namespace spdlog { class logger; }

namespace tensile::storage {

struct RecorderOptions {
    std::string path;
    OpenOptions open;
    std::size_t frame_capacity = 1u << 17;         // frames waiting for the writer
    std::size_t message_capacity = 8192;           // raw pieces, events, alarms, counters waiting
    // Raw bytes waiting, all sources together: over 100 ms of a flat-out text
    // stream, minutes of a real one; the writer drains them while commits run.
    std::size_t raw_bytes_in_flight = 8u << 20;
    std::size_t chunk_frames = 4096;
    std::size_t raw_chunk_bytes = 256u << 10;
    std::chrono::milliseconds commit_interval{200};
    std::chrono::milliseconds poll_interval{10};   // how long the writer naps when nothing is pushed
    std::uint64_t min_free_bytes = 256ull << 20;
    // A cap on the database file (0: none), applied as SQLite's page limit on
    // the writer's connection. Reaching it, or a disk that fills before the
    // free-space guard sees it, stops recording like the guard does.
    std::uint64_t max_database_bytes = 0;
    std::chrono::milliseconds disk_check_interval{1000};
    // Packed data held while the database is locked (raw bytes packed about
    // 4x): about 100 s of a 10 kHz three-channel text rig. The committer may
    // hold one more batch of up to this size, so the bound is twice it.
    std::size_t backlog_bytes = 12u << 20;
    std::shared_ptr<spdlog::logger> log;           // may be null: no logging
    // Called on the writer thread with each alarm it raises (kind, message); may be empty.
    std::function<void(const std::string&, const std::string&)> notify;
};

struct RecorderCounters {
    std::uint64_t frames_queued = 0;        // accepted into the inbox
    std::uint64_t frames_written = 0;       // handed to the database (committed at the next commit)
    std::uint64_t frames_committed = 0;     // known durable
    std::uint64_t frames_dropped = 0;       // inbox full
    std::uint64_t frames_refused_disk = 0;  // disk-space guard
    std::uint64_t frames_without_run = 0;   // pushed while no run was open
    std::uint64_t messages_dropped = 0;     // inbox full or raw byte budget spent
    std::uint64_t raw_bytes_written = 0;
    std::uint64_t raw_bytes_refused = 0;    // no run open, or the disk-space guard
    std::uint64_t raw_chunks_packed = 0;
    std::uint64_t raw_chunks_quick = 0;     // of those, packed quickly: the writer was behind
    std::uint64_t commits = 0;
    std::uint64_t write_errors = 0;
    std::size_t frames_waiting = 0;         // in the inbox now
    std::size_t frame_high_water = 0;
    std::size_t message_high_water = 0;
    bool disk_low = false;
    bool db_locked = false;                 // the last write attempt met another process's lock
    double db_locked_s = 0;                 // how long the current (or the last) lock lasted
    std::uint64_t lock_episodes = 0;        // locks met since start
    std::size_t backlog_bytes = 0;          // written data held in memory, not yet committed
};

class Recorder {
public:
    static Result<std::unique_ptr<Recorder>> start(RecorderOptions options);
    ~Recorder();
    Recorder(const Recorder&) = delete;
    Recorder& operator=(const Recorder&) = delete;

    // Frames, raw bytes and events after begin_run belong to that run, up to end_run.
    void begin_run(std::int64_t run);
    void end_run();

    // Never block on the disk; false / fewer accepted means refused and counted.
    std::size_t try_push(std::span<const Frame> frames) { return inbox_.push_frames(frames); }
    bool try_push(const Frame& frame) { return inbox_.push_frames({&frame, 1}) == 1; }
    bool try_push_raw(std::string_view source, std::string_view bytes, double arrival_s);
    bool try_push_event(const Event& event);
    bool try_push_alarm(AlarmRecord alarm);
    bool try_push_counter(CounterRecord counter);
    // A live run's state change, written in order with its data.
    void set_state(std::int64_t run, RunState state, std::string cause, double unix_s);
    // Ends the run (after end_run): results, closed state and digest in one
    // transaction, after every frame pushed before. The future is ready once
    // that is committed (or failed); the writer keeps it through a lock.
    std::future<Status> finish_run(std::int64_t run, RunState state, std::string cause, double unix_s,
                                   std::optional<std::string> results_json);

    // Blocks until everything pushed before is committed.
    Status flush();
    // Flushes and ends the writer thread; called by the destructor too.
    void stop();

    [[nodiscard]] RecorderCounters counters() const;

private:
    class Writer;
    Recorder(RecorderOptions options, std::unique_ptr<Writer> writer);

    RecorderOptions options_;
    RecorderInbox inbox_;
    std::atomic<std::uint64_t> raw_in_flight_{0};
    std::atomic<bool> stopping_{false};
    std::unique_ptr<Writer> writer_;
    std::thread thread_;
};

}  // namespace tensile::storage
