// The recorder's writer thread (internal to the recorder). Takes everything
// from the inbox into a backlog of writes in memory (frames packed into
// chunks), and on the commit interval (sooner for state changes, flushes and
// run ends, and at stop) hands the backlog and the open chunk to the
// committer thread, which writes them in one transaction on the recorder's own
// Store connection. While the disk works the writer goes on taking and
// packing, so a slow commit never stops the inbox from draining.
//
// Error policy: a batch leaves memory only once committed. Another process's
// lock (SQLITE_BUSY / SQLITE_LOCKED) rolls the transaction back and the batch
// comes back whole, ahead of what was taken since, with an alarm; memory stays
// bounded by `backlog_bytes` (writer and committer each) plus the inbox. Any
// other failed write is logged and counted (write_errors), and the writer goes
// on with the next data.
#pragma once

#include <atomic>
#include <chrono>
#include <future>
#include <map>
#include <optional>
#include <vector>

#include "batch_committer.hpp"
#include "commit_batch.hpp"
#include "recorder.hpp"
#include "store.hpp"

namespace tensile::storage {

class Recorder::Writer {
public:
    Writer(Store store, const RecorderOptions& options, RecorderInbox& inbox, std::atomic<std::uint64_t>& raw_in_flight,
           const std::atomic<bool>& stopping);
    void run();  // the thread body; returns after stop with everything committed (or reported lost)

    // Read from other threads.
    std::atomic<std::uint64_t> frames_written{0}, frames_committed{0}, frames_refused_disk{0}, frames_without_run{0},
        raw_bytes_written{0}, raw_bytes_refused{0}, commits{0}, write_errors{0}, lock_episodes{0},
        raw_chunks_packed{0}, raw_chunks_quick{0};
    std::atomic<bool> disk_low{false}, db_locked{false};
    std::atomic<double> db_locked_s{0};
    std::atomic<std::size_t> backlog_bytes{0};

private:
    using Clock = std::chrono::steady_clock;
    struct RawBuffer {
        RawChunk chunk;
        std::optional<double> first_s, last_s;
    };
    void handle(Message& m);
    void full(const std::string& why);
    void take_frames(std::span<const Frame> frames);
    void close_chunk();                // moves the open chunk to the backlog and starts a new one
    std::optional<FrameChunkRow> tail_row() const;  // the open, partial chunk as a row
    void write_raw(RawBuffer& buffer);  // moves a raw buffer to the backlog
    bool behind() const;                // packing should be quick, not small
    void close_run();
    void queue(Write w, std::size_t bytes);
    void hand_off();                        // the backlog to the committer, when it is idle
    void commit_now();                      // hand off and wait for the outcome (stop, a new run)
    void settle(CommitResult result);       // counters, waiters, alarms; a batch handed back rejoins the backlog
    void give_back(CommitBatch batch);
    void wait_committer();                  // settles the batch in flight, if any
    void show_backlog();
    void locked(const std::string& why);
    void unlocked();
    void settle_waiters(const Status& s);
    void give_up_at_stop();
    void check_disk(Clock::time_point now);
    void report_drops();
    void alarm(std::string kind, std::string message);
    double wall_now() const;

    const RecorderOptions& options_;
    RecorderInbox& inbox_;
    std::atomic<std::uint64_t>& raw_in_flight_;
    const std::atomic<bool>& stopping_;

    std::vector<Write> backlog_;
    std::size_t backlog_size_ = 0;   // bytes held by backlog_
    std::size_t in_flight_size_ = 0; // bytes held by the batch the committer writes
    std::vector<Waiter> flushes_;    // settled by the next commit
    bool commit_now_ = false;        // a state change, flush or run end is waiting
    std::optional<Clock::time_point> locked_since_;
    std::uint64_t drops_at_lock_ = 0;
    std::optional<std::int64_t> run_;
    std::vector<Frame> chunk_;
    std::int64_t chunk_seq_ = 0;
    std::int64_t chunk_first_index_ = 0;
    std::int64_t run_frame_index_ = 0;  // frames routed to the run, stored or refused
    bool chunk_dirty_ = false;
    bool db_full_ = false;  // the database could not grow during this run
    std::map<std::string, RawBuffer> raw_;
    std::map<std::string, std::int64_t> raw_seq_;
    std::uint64_t uncommitted_frames_ = 0;
    std::size_t last_take_ = 0;      // frames the last look at the inbox found waiting
    std::uint64_t quick_at_begin_ = 0, packed_at_begin_ = 0;  // the counters when the run began
    std::uint64_t reported_frame_drops_ = 0, reported_message_drops_ = 0;
    Clock::time_point next_commit_;
    Clock::time_point next_disk_check_;
    Clock::time_point retry_at_{};   // after a failed commit, the next try waits until then
    BatchCommitter committer_;       // last: its thread starts once the rest is set up
};

}  // namespace tensile::storage
