// BatchCommitter: see batch_committer.hpp.
#include "batch_committer.hpp"

#include <spdlog/spdlog.h>

namespace tensile::storage {

using Outcome = CommitResult::Outcome;

BatchCommitter::BatchCommitter(Store store, std::shared_ptr<spdlog::logger> log, std::atomic<std::uint64_t>& write_errors,
                               std::function<void()> done)
    : store_(std::move(store)), log_(std::move(log)), write_errors_(write_errors), done_(std::move(done)),
      thread_([this] { loop(); }) {}

BatchCommitter::~BatchCommitter() {
    {
        std::lock_guard lock(mutex_);
        quit_ = true;
    }
    changed_.notify_all();
    thread_.join();
}

bool BatchCommitter::working() const {
    std::lock_guard lock(mutex_);
    return working_;
}

bool BatchCommitter::has_result() const {
    std::lock_guard lock(mutex_);
    return result_.has_value();
}

bool BatchCommitter::idle() const {
    std::lock_guard lock(mutex_);
    return !working_ && !result_.has_value();
}

void BatchCommitter::submit(CommitBatch batch) {
    {
        std::lock_guard lock(mutex_);
        pending_ = std::move(batch);
        working_ = true;
    }
    changed_.notify_all();
}

std::optional<CommitResult> BatchCommitter::take_result() {
    std::lock_guard lock(mutex_);
    std::optional<CommitResult> out = std::move(result_);
    result_.reset();
    return out;
}

CommitResult BatchCommitter::wait_result() {
    std::unique_lock lock(mutex_);
    changed_.wait(lock, [&] { return result_.has_value(); });
    CommitResult out = std::move(*result_);
    result_.reset();
    return out;
}

Store& BatchCommitter::store() { return store_; }

void BatchCommitter::loop() {
    for (;;) {
        CommitBatch batch;
        {
            std::unique_lock lock(mutex_);
            changed_.wait(lock, [&] { return quit_ || pending_.has_value(); });
            if (!pending_) return;  // quit with nothing handed over
            batch = std::move(*pending_);
            pending_.reset();
        }
        CommitResult result = commit(std::move(batch));
        {
            std::lock_guard lock(mutex_);
            result_ = std::move(result);
            working_ = false;
        }
        changed_.notify_all();
        if (done_) done_();
    }
}

Status BatchCommitter::apply(const Write& w) {
    if (const auto* row = std::get_if<FrameChunkRow>(&w)) return store_.write_frame_chunk(*row);
    if (const auto* raw = std::get_if<RawWrite>(&w)) 
        return store_.write_packed_raw(raw->run, raw->source, raw->seq, raw->packed, raw->first_s, raw->last_s);
    if (const auto* e = std::get_if<EventWrite>(&w)) return store_.add_event(e->run, e->event);
    if (const auto* a = std::get_if<AlarmRecord>(&w)) return store_.add_alarm(*a);
    if (const auto* c = std::get_if<CounterRecord>(&w)) return store_.add_counter(*c);
    if (const auto* s = std::get_if<StateWrite>(&w)) return store_.write_state(s->run, s->state, s->cause, s->unix_s);
    const auto& f = std::get<FinishRun>(w);
    if (f.results_json)
        if (auto s = store_.set_results_json(f.run, *f.results_json); !s) return s;
    return store_.write_finish(f.run, f.state, f.cause, f.unix_s);
}

// The whole batch in one transaction, its open chunk last.
CommitResult BatchCommitter::commit(CommitBatch batch) {
    auto& db = store_.db();
    CommitResult result;
    auto hand_back = [&](Outcome outcome, std::string error) {
        result.outcome = outcome;
        result.error = std::move(error);
        result.finished.clear();
        result.batch = std::move(batch);
        return std::move(result);
    };
    if (auto s = db.exec("BEGIN IMMEDIATE"); !s) {
        if (db.last_was_busy()) return hand_back(Outcome::locked, s.error());
        write_errors_.fetch_add(1, std::memory_order_relaxed);
        if (log_) log_->error("recorder: cannot begin a transaction: {}", s.error());
        return hand_back(Outcome::not_begun, s.error());
    }
    // A lock or a full disk rolls back and hands the batch back whole; any
    // other failed write is lost alone (counted, logged) and the others go on.
    auto write = [&](const Write& w, const char* what) -> std::optional<Outcome> {
        Status s = apply(w);
        if (const auto* f = std::get_if<FinishRun>(&w)) result.finished.emplace_back(f->done, s);
        if (s) return std::nullopt;
        if (db.last_was_busy() || db.last_was_full()) {
            const Outcome outcome = db.last_was_busy() ? Outcome::locked : Outcome::full;
            (void)db.exec("ROLLBACK");
            result.error = s.error();
            return outcome;
        }
        write_errors_.fetch_add(1, std::memory_order_relaxed);
        result.write_errors = true;
        if (log_) log_->error("recorder: writing {} failed: {}", what, s.error());
        return std::nullopt;
    };
    for (const Write& w : batch.writes)
        if (auto stop = write(w, "a backlog record")) return hand_back(*stop, result.error);
    if (batch.tail)
        if (auto stop = write(*batch.tail, "frame chunk")) return hand_back(*stop, result.error);
    if (auto s = db.exec("COMMIT"); !s) {
        const bool busy = db.last_was_busy();
        const bool no_room = db.last_was_full();
        (void)db.exec("ROLLBACK");
        if (busy) return hand_back(Outcome::locked, s.error());
        if (no_room) return hand_back(Outcome::full, s.error());
        write_errors_.fetch_add(1, std::memory_order_relaxed);
        if (log_) log_->error("recorder: commit failed, {} records lost: {}", batch.writes.size(), s.error());
        result.outcome = Outcome::lost;
        result.error = s.error();
        for (auto& [done, st] : result.finished) st = Error{"recorder: commit failed: " + s.error()};
        result.batch.flushes = std::move(batch.flushes);  // settled with the error by the writer
        return result;
    }
    result.outcome = Outcome::committed;
    result.batch = std::move(batch);
    return result;
}

}  // namespace tensile::storage
