// The recorder's committer thread: stores one CommitBatch at a time in one
// SQLite transaction, so the writer thread goes on taking frames from the
// inbox and packing them while the disk works (a commit with its fsync can
// take longer than the inbox holds at full rate). It owns the recorder's
// Store; the writer reaches it only while no batch is in flight.
// Error policy: every outcome comes back as a CommitResult; a single failed
// write (not a lock, not a full disk) is logged, counted in write_errors and
// skipped, as the recorder always did.
#pragma once

#include <atomic>
#include <condition_variable>
#include <functional>
#include <mutex>
#include <optional>
#include <thread>

#include "commit_batch.hpp"
#include "store.hpp"

namespace spdlog { class logger; }

namespace tensile::storage {

class BatchCommitter {
public:
    // `done` is called on the committer thread after each batch (to wake the writer).
    BatchCommitter(Store store, std::shared_ptr<spdlog::logger> log, std::atomic<std::uint64_t>& write_errors,
                   std::function<void()> done);
    ~BatchCommitter();
    BatchCommitter(const BatchCommitter&) = delete;
    BatchCommitter& operator=(const BatchCommitter&) = delete;

    bool working() const;                    // a batch is being written
    bool has_result() const;                 // a result waits to be taken
    bool idle() const;                       // neither: a batch may be submitted
    void submit(CommitBatch batch);          // only when idle (a waiting result would be overwritten)
    std::optional<CommitResult> take_result();  // never blocks
    CommitResult wait_result();              // blocks until the batch in flight is done
    Store& store();                          // only while idle: the writer's own look-ups

private:
    void loop();
    CommitResult commit(CommitBatch batch);
    Status apply(const Write& w);

    Store store_;
    std::shared_ptr<spdlog::logger> log_;
    std::atomic<std::uint64_t>& write_errors_;
    std::function<void()> done_;
    mutable std::mutex mutex_;
    std::condition_variable changed_;
    std::optional<CommitBatch> pending_;
    std::optional<CommitResult> result_;
    bool working_ = false;
    bool quit_ = false;
    std::thread thread_;
};

}  // namespace tensile::storage
