// The recorder's writer thread (internal to the recorder). Owns its own Store
// connection; takes everything from the inbox, writes it inside one open
// transaction, and commits on the commit interval, on flush and at stop.
// Error policy: a failed write is logged and counted, the transaction rolled
// back at the commit, and the writer goes on with the next data.
#pragma once

#include <atomic>
#include <chrono>
#include <map>
#include <optional>

#include "recorder.hpp"
#include "store.hpp"

namespace tensile::storage {

class Recorder::Writer {
public:
    Writer(Store store, const RecorderOptions& options, RecorderInbox& inbox, std::atomic<std::uint64_t>& raw_in_flight,
           const std::atomic<bool>& stopping);
    void run();  // the thread body; returns after stop with everything committed

    // Read from other threads.
    std::atomic<std::uint64_t> frames_written{0}, frames_committed{0}, frames_refused_disk{0}, frames_without_run{0},
        raw_bytes_written{0}, raw_bytes_refused{0}, commits{0}, write_errors{0};
    std::atomic<bool> disk_low{false};

private:
    using Clock = std::chrono::steady_clock;
    struct RawBuffer {
        RawChunk chunk;
        std::optional<double> first_s, last_s;
    };

    void handle(Message& m);
    void take_frames(std::span<const Frame> frames);
    void close_chunk();        // writes the chunk buffer and starts a new chunk
    void write_tail_chunk();   // writes the partial chunk, keeping it open
    void write_raw(RawBuffer& buffer);
    void close_run();
    void commit();
    void check_disk(Clock::time_point now);
    void report_drops();
    void alarm(std::string kind, std::string message);
    void check(const Status& s, const char* what);
    bool begin_if_needed();
    double wall_now() const;

    Store store_;
    const RecorderOptions& options_;
    RecorderInbox& inbox_;
    std::atomic<std::uint64_t>& raw_in_flight_;
    const std::atomic<bool>& stopping_;

    bool in_transaction_ = false;
    bool transaction_failed_ = false;
    std::optional<std::int64_t> run_;
    std::vector<Frame> chunk_;
    std::int64_t chunk_seq_ = 0;
    std::int64_t chunk_first_index_ = 0;
    std::int64_t run_frame_index_ = 0;  // frames routed to the run, stored or refused
    bool chunk_dirty_ = false;
    std::map<std::string, RawBuffer> raw_;
    std::map<std::string, std::int64_t> raw_seq_;
    std::uint64_t uncommitted_frames_ = 0;
    std::uint64_t reported_frame_drops_ = 0, reported_message_drops_ = 0, reported_refused_ = 0;
    Clock::time_point next_commit_;
    Clock::time_point next_disk_check_;
};

}  // namespace tensile::storage
