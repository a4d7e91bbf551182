// What the recorder's writer hands its committer thread: the writes gathered
// since the last commit, in the order they were pushed, to be stored in one
// transaction; and what comes back. Internal to the recorder.
// Error policy: none here; outcomes are values (see BatchResult).
#pragma once

#include <cstdint>
#include <future>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <variant>
#include <vector>

#include "engine/event.hpp"
#include "raw_chunk.hpp"
#include "recorder_inbox.hpp"
#include "store_types.hpp"

namespace tensile::storage {

struct RawWrite {
    std::int64_t run;
    std::string source;
    std::int64_t seq;
    PackedRaw packed;  // packed on the writer thread, so the backlog holds the small form
    std::optional<double> first_s, last_s;
};
struct EventWrite { std::int64_t run; Event event; };
using Write = std::variant<FrameChunkRow, RawWrite, EventWrite, AlarmRecord, CounterRecord, StateWrite, FinishRun>;
using Waiter = std::shared_ptr<std::promise<Status>>;

struct CommitBatch {
    std::vector<Write> writes;
    std::optional<FrameChunkRow> tail;  // the open frame chunk as it stood; rewritten by every commit until full
    std::vector<Waiter> flushes;        // settled once this batch is committed (or lost)
    std::uint64_t frames = 0;           // frames this batch stores for the first time
    std::size_t bytes = 0;              // memory it holds, roughly
};

struct CommitResult {
    enum class Outcome {
        committed,  // stored; some single writes may have failed (write_errors)
        locked,     // another process holds the lock: rolled back, the batch is handed back whole
        full,       // the database cannot grow: rolled back, handed back
        not_begun,  // the transaction could not start: handed back for a later try
        lost,       // COMMIT failed for another reason: the batch is gone (counted, logged)
    };
    Outcome outcome = Outcome::committed;
    std::string error;
    CommitBatch batch;                                // handed back for every outcome but committed and lost
    std::vector<std::pair<Waiter, Status>> finished;  // the run closes this batch wrote, with their status
    bool write_errors = false;                        // some single writes failed and were skipped
};

}  // namespace tensile::storage
