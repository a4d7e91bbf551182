// Recorder::Writer: the body of the recorder's thread. See recorder_writer.hpp.
#include "recorder_writer.hpp"

#include <cmath>
#include <filesystem>
#include <spdlog/spdlog.h>
#include <sys/statvfs.h>
#include <thread>

#include "frame_codec.hpp"

namespace tensile::storage {
namespace {

std::string mib(std::uint64_t bytes) { return std::to_string(bytes >> 20) + " MiB"; }

// Free space for an unprivileged writer (f_bavail, not f_bfree) on the file
// system that holds the database; nullopt when it cannot be read.
std::optional<std::uint64_t> free_bytes(const std::string& db_path) {
    std::filesystem::path dir = std::filesystem::path(db_path).parent_path();
    if (dir.empty()) dir = ".";
    struct statvfs vfs {};
    if (::statvfs(dir.c_str(), &vfs) != 0) return std::nullopt;
    return static_cast<std::uint64_t>(vfs.f_bavail) * vfs.f_frsize;
}

std::string seconds(double s) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.1f s", s);
    return buf;
}

// Between two tries at a locked database; each try also waits the busy timeout.
constexpr auto retry_pause = std::chrono::milliseconds(50);

}  // namespace

Recorder::Writer::Writer(Store store, const RecorderOptions& options, RecorderInbox& inbox,
                         std::atomic<std::uint64_t>& raw_in_flight, const std::atomic<bool>& stopping)
    : options_(options), inbox_(inbox), raw_in_flight_(raw_in_flight), stopping_(stopping),
      committer_(std::move(store), options.log, write_errors, [&inbox] { inbox.wake(); }) {
    chunk_.reserve(options_.chunk_frames);
    if (options_.max_database_bytes > 0) {
        auto& db = committer_.store().db();  // idle: nothing handed over yet
        std::int64_t page = 4096;
        if (auto q = db.prepare("PRAGMA page_size"); q)
            if (auto row = q->step(); row && *row) page = q->int64(0);
        // PRAGMA takes no parameters; the number is ours, not input.
        const std::string cap = "PRAGMA max_page_count = " +
                                std::to_string(std::max<std::uint64_t>(1, options_.max_database_bytes / static_cast<std::uint64_t>(page)));
        if (auto q = db.prepare(cap.c_str()); q) (void)q->step();
    }
}

void Recorder::Writer::run() {
    std::vector<Frame> frames;
    std::vector<Message> messages;
    frames.reserve(inbox_.frame_capacity());
    std::uint64_t taken = 0;  // frames taken from the inbox so far
    next_commit_ = Clock::now() + options_.commit_interval;
    next_disk_check_ = Clock::now();
    for (;;) {
        // Read before taking: everything pushed before stop() is in this last take.
        const bool stop = stopping_.load();
        // A full backlog leaves the rest in the inbox, which is bounded too.
        if (stop || backlog_size_ < options_.backlog_bytes) {
            inbox_.take(frames, messages, options_.poll_interval, stopping_);
        } else {
            frames.clear();
            messages.clear();
            std::this_thread::sleep_for(options_.poll_interval);
        }
        const auto now = Clock::now();
        if (now >= next_disk_check_) check_disk(now);
        std::size_t pos = 0;
        for (Message& m : messages) {
            const std::size_t upto = std::min<std::uint64_t>(m.frames_before - taken, frames.size());
            if (upto > pos) take_frames(std::span<const Frame>(frames).subspan(pos, upto - pos));
            pos = std::max(pos, upto);
            handle(m);
        }
        take_frames(std::span<const Frame>(frames).subspan(pos));
        taken += frames.size();
        last_take_ = frames.size();
        if (auto result = committer_.take_result()) settle(std::move(*result));
        if (stop) {
            wait_committer();
            commit_now();
            if (locked_since_) give_up_at_stop();
            return;
        }
        // After a failed try, the next one waits a little (a lock) or a second
        // (any other error), so a lasting fault neither spins nor floods the log.
        const bool due = commit_now_ || Clock::now() >= next_commit_;
        if (due && committer_.idle() && Clock::now() >= retry_at_) hand_off();
    }
}

void Recorder::Writer::handle(Message& m) {
    if (auto* begin = std::get_if<BeginRun>(&m.payload)) {
        if (run_) close_run();
        run_ = begin->run;
        db_full_ = false;  // a new run tries again
        quick_at_begin_ = raw_chunks_quick.load();
        packed_at_begin_ = raw_chunks_packed.load();
        // A run may be resumed by a later recorder; continue its numbering
        // (chunks and each source's raw chunks), as stored once the batch in
        // flight is settled.
        wait_committer();
        chunk_seq_ = 0;
        run_frame_index_ = 0;
        auto& db = committer_.store().db();
        if (auto q = db.prepare("SELECT coalesce(max(seq) + 1, 0), coalesce(sum(frame_count), 0) FROM frame_chunks WHERE run_id = ?")) {
            q->bind(1, *run_);
            if (auto row = q->step(); row && *row) { chunk_seq_ = q->int64(0); run_frame_index_ = q->int64(1); }
        }
        raw_seq_.clear();
        if (auto q = db.prepare("SELECT source, max(seq) + 1 FROM raw_chunks WHERE run_id = ? GROUP BY source")) {
            q->bind(1, *run_);
            while (auto row = q->step()) {
                if (!*row) break;
                raw_seq_[q->text(0)] = q->int64(1);
            }
        }
    } else if (std::holds_alternative<EndRun>(m.payload)) {
        close_run();
    } else if (auto* raw = std::get_if<RawPiece>(&m.payload)) {
        raw_in_flight_.fetch_sub(raw->bytes.size(), std::memory_order_relaxed);
        if (!run_ || disk_low.load() || db_full_) {
            raw_bytes_refused.fetch_add(raw->bytes.size(), std::memory_order_relaxed);
            return;
        }
        RawBuffer& buf = raw_[raw->source];
        if (buf.chunk.source.empty()) buf.chunk.source = raw->source;
        buf.chunk.bytes += raw->bytes;
        buf.chunk.arrivals.push_back({raw->bytes.size(), raw->arrival_s});
        if (!buf.first_s) buf.first_s = raw->arrival_s;
        buf.last_s = raw->arrival_s;
        if (buf.chunk.bytes.size() >= options_.raw_chunk_bytes) write_raw(buf);
    } else if (auto* event = std::get_if<Event>(&m.payload)) {
        if (!run_) return;
        queue(EventWrite{*run_, *event}, sizeof(Event) + event->label.size());
    } else if (auto* alarm_rec = std::get_if<AlarmRecord>(&m.payload)) {
        const std::size_t size = 64 + alarm_rec->kind.size() + alarm_rec->message.size();
        queue(std::move(*alarm_rec), size);
    } else if (auto* counter = std::get_if<CounterRecord>(&m.payload)) {
        const std::size_t size = 64 + counter->source.size() + counter->name.size();
        queue(std::move(*counter), size);
    } else if (auto* state = std::get_if<StateWrite>(&m.payload)) {
        const std::size_t size = 64 + state->cause.size();
        queue(std::move(*state), size);
        commit_now_ = true;
    } else if (auto* finish = std::get_if<FinishRun>(&m.payload)) {
        const std::size_t size = 64 + finish->cause.size() + (finish->results_json ? finish->results_json->size() : 0);
        queue(std::move(*finish), size);
        commit_now_ = true;
    } else if (auto* flush = std::get_if<FlushRequest>(&m.payload)) {
        flushes_.push_back(flush->done);
        commit_now_ = true;
    }
}

void Recorder::Writer::take_frames(std::span<const Frame> frames) {
    if (frames.empty()) return;
    if (!run_) { frames_without_run.fetch_add(frames.size(), std::memory_order_relaxed); return; }
    if (disk_low.load() || db_full_) {
        frames_refused_disk.fetch_add(frames.size(), std::memory_order_relaxed);
        run_frame_index_ += static_cast<std::int64_t>(frames.size());  // the gap shows in first_index
        return;
    }
    for (const Frame& f : frames) {
        if (chunk_.empty()) chunk_first_index_ = run_frame_index_;
        chunk_.push_back(f);
        ++run_frame_index_;
        chunk_dirty_ = true;
        if (chunk_.size() >= options_.chunk_frames) close_chunk();
    }
    frames_written.fetch_add(frames.size(), std::memory_order_relaxed);
    uncommitted_frames_ += frames.size();
}

std::optional<FrameChunkRow> Recorder::Writer::tail_row() const {
    if (!run_ || chunk_.empty()) return std::nullopt;
    FrameChunkRow row;
    row.run_id = *run_;
    row.seq = chunk_seq_;
    row.first_index = chunk_first_index_;
    row.frame_count = static_cast<std::int64_t>(chunk_.size());
    for (const Frame& f : chunk_) {
        if (std::isnan(f.time_s)) continue;
        if (!row.first_time_s || f.time_s < *row.first_time_s) row.first_time_s = f.time_s;
        if (!row.last_time_s || f.time_s > *row.last_time_s) row.last_time_s = f.time_s;
    }
    row.data = encode_frames(chunk_);
    return row;
}

void Recorder::Writer::close_chunk() {
    if (chunk_.empty()) return;
    if (auto row = tail_row()) {
        const std::size_t size = row->data.size() + 64;
        queue(std::move(*row), size);
    }
    chunk_dirty_ = false;
    ++chunk_seq_;
    chunk_.clear();
}

void Recorder::Writer::write_raw(RawBuffer& buf) {
    if (!run_ || buf.chunk.bytes.empty()) return;
    auto it = raw_seq_.try_emplace(buf.chunk.source, 0).first;  // numbered from what begin_run found stored
    buf.chunk.seq = it->second++;
    const PackEffort effort = behind() ? PackEffort::quick : PackEffort::thorough;
    PackedRaw packed = pack_raw(buf.chunk, effort);
    raw_chunks_packed.fetch_add(1, std::memory_order_relaxed);
    if (effort == PackEffort::quick) raw_chunks_quick.fetch_add(1, std::memory_order_relaxed);
    const std::size_t size = packed.bytes.size() + packed.arrivals.size() + 64;
    queue(RawWrite{*run_, buf.chunk.source, buf.chunk.seq, std::move(packed), buf.first_s, buf.last_s}, size);
    buf.chunk = RawChunk{};
    buf.chunk.source = it->first;
    buf.first_s.reset();
    buf.last_s.reset();
}

// Behind: the last take found the inbox a quarter full or more, or raw bytes
// wait past half their budget: the writer's own work is not keeping up. Then
// raw chunks are packed quickly (about 1.7x faster, half the shrinking) so it
// catches up before the inbox fills and frames would be dropped; a rig at a
// real pace never gets here. Not while another process holds the database:
// then memory, not time, is short, and the backlog keeps the smaller packing.
bool Recorder::Writer::behind() const {
    if (locked_since_) return false;
    return last_take_ >= inbox_.frame_capacity() / 4 ||
           raw_in_flight_.load(std::memory_order_relaxed) >= options_.raw_bytes_in_flight / 2;
}

void Recorder::Writer::close_run() {
    close_chunk();
    for (auto& [source, buf] : raw_) write_raw(buf);
    const std::uint64_t quick = raw_chunks_quick.load() - quick_at_begin_, all = raw_chunks_packed.load() - packed_at_begin_;
    if (quick > 0 && options_.log && run_)
        options_.log->info("recorder: run {}: {} of {} raw-byte chunks packed quickly, the writer being behind", *run_, quick, all);
    raw_.clear();
    raw_seq_.clear();
    run_.reset();
}

void Recorder::Writer::queue(Write w, std::size_t bytes) {
    backlog_.push_back(std::move(w));
    backlog_size_ += bytes;
    show_backlog();
}

void Recorder::Writer::show_backlog() {
    backlog_bytes.store(backlog_size_ + in_flight_size_, std::memory_order_relaxed);
}

// Hands the backlog and the open chunk to the committer as one batch. With
// nothing to write, waiters are settled at once; while locked, an empty batch
// still goes, to learn when the lock is gone.
void Recorder::Writer::hand_off() {
    for (auto& [source, buf] : raw_) write_raw(buf);
    report_drops();
    next_commit_ = Clock::now() + options_.commit_interval;
    auto tail = chunk_dirty_ ? tail_row() : std::nullopt;
    commit_now_ = false;
    if (backlog_.empty() && !tail && !locked_since_) {
        settle_waiters(Done{});
        return;
    }
    CommitBatch batch{std::move(backlog_), std::move(tail), std::move(flushes_), uncommitted_frames_, backlog_size_};
    backlog_.clear();
    flushes_.clear();
    uncommitted_frames_ = 0;
    in_flight_size_ = backlog_size_;
    backlog_size_ = 0;
    chunk_dirty_ = false;
    show_backlog();
    committer_.submit(std::move(batch));
}

void Recorder::Writer::commit_now() {
    hand_off();
    wait_committer();
}

void Recorder::Writer::wait_committer() {
    if (committer_.working() || committer_.has_result()) settle(committer_.wait_result());
}

// A batch that was not stored goes back in front of what came since, so the
// order of writes holds. Its copy of the open chunk is dropped: the chunk is
// either still open (written afresh next time) or closed since, and then
// whole in the backlog.
void Recorder::Writer::give_back(CommitBatch batch) {
    backlog_.insert(backlog_.begin(), std::make_move_iterator(batch.writes.begin()), std::make_move_iterator(batch.writes.end()));
    flushes_.insert(flushes_.begin(), batch.flushes.begin(), batch.flushes.end());
    backlog_size_ += batch.bytes;
    uncommitted_frames_ += batch.frames;
    if (batch.tail && !chunk_.empty()) chunk_dirty_ = true;
    in_flight_size_ = 0;
    show_backlog();
}

void Recorder::Writer::settle(CommitResult r) {
    using Outcome = CommitResult::Outcome;
    in_flight_size_ = 0;
    show_backlog();  // before any waiter wakes: it may read the counters at once
    switch (r.outcome) {
    case Outcome::committed: {
        commits.fetch_add(1, std::memory_order_relaxed);
        frames_committed.fetch_add(r.batch.frames, std::memory_order_relaxed);
        for (const Write& w : r.batch.writes)
            if (const auto* raw = std::get_if<RawWrite>(&w))
                raw_bytes_written.fetch_add(raw->packed.plain_bytes, std::memory_order_relaxed);
        for (auto& [done, s] : r.finished) done->set_value(std::move(s));
        const Status s = r.write_errors ? Status{Error{"recorder: write errors in the last commit (see the log)"}} : Status{Done{}};
        for (auto& done : r.batch.flushes) done->set_value(s);
        if (locked_since_) unlocked();
        return;
    }
    case Outcome::locked:
        give_back(std::move(r.batch));
        locked(r.error);
        retry_at_ = Clock::now() + retry_pause;
        return;
    case Outcome::full:
        give_back(std::move(r.batch));
        full(r.error);
        retry_at_ = Clock::now() + std::chrono::milliseconds(1000);
        return;
    case Outcome::not_begun:
        give_back(std::move(r.batch));
        retry_at_ = Clock::now() + std::chrono::milliseconds(1000);
        return;
    case Outcome::lost:
        for (auto& [done, s] : r.finished) done->set_value(std::move(s));
        for (auto& done : r.batch.flushes) done->set_value(Error{"recorder: commit failed: " + r.error});
        retry_at_ = Clock::now() + std::chrono::milliseconds(1000);
        return;
    }
}

void Recorder::Writer::settle_waiters(const Status& s) {
    for (auto& done : flushes_) done->set_value(s);
    flushes_.clear();
}

void Recorder::Writer::locked(const std::string& why) {
    const auto now = Clock::now();
    if (!locked_since_) {
        locked_since_ = now;
        drops_at_lock_ = inbox_.frames_dropped.load();
        db_locked.store(true);
        lock_episodes.fetch_add(1, std::memory_order_relaxed);
        alarm("database_locked",
              "the database " + options_.path + " is locked by another process (" + why +
                  "): frames and records are held in memory (up to " + mib(options_.backlog_bytes) + " and " +
                  std::to_string(inbox_.frame_capacity()) +
                  " queued frames) and written when the lock is released; close the program holding it");
    }
    db_locked_s.store(std::chrono::duration<double>(now - *locked_since_).count());
}

void Recorder::Writer::unlocked() {
    const double held = std::chrono::duration<double>(Clock::now() - *locked_since_).count();
    locked_since_.reset();
    db_locked.store(false);
    db_locked_s.store(held);
    const std::uint64_t dropped = inbox_.frames_dropped.load() - drops_at_lock_;
    alarm("database_unlocked", "the database lock was released after " + seconds(held) +
                                   "; what was held meanwhile is written" +
                                   (dropped > 0 ? ", but " + std::to_string(dropped) +
                                                      " frames were dropped while the queue was full"
                                                : ", no frame lost"));
    commit_now_ = true;  // the alarm itself goes in at once
}

// The database could not grow (disk full, or its size cap): frames and raw
// bytes of the run stop being taken and those waiting are given up, counted;
// the small records (states, events, alarms, the run's close) stay in the
// backlog and are tried again. What was committed before stays intact.
void Recorder::Writer::full(const std::string& why) {
    std::uint64_t frames_lost = uncommitted_frames_;
    std::erase_if(backlog_, [&](const Write& w) {
        if (std::holds_alternative<FrameChunkRow>(w)) return true;
        if (const auto* r = std::get_if<RawWrite>(&w)) {
            raw_bytes_refused.fetch_add(r->packed.plain_bytes, std::memory_order_relaxed);
            return true;
        }
        return false;
    });
    backlog_size_ = 256 * backlog_.size();  // what is left is small records
    show_backlog();
    chunk_.clear();
    chunk_dirty_ = false;
    raw_.clear();
    frames_refused_disk.fetch_add(frames_lost, std::memory_order_relaxed);
    uncommitted_frames_ = 0;
    if (db_full_) return;
    db_full_ = true;
    alarm("disk_full", "the database " + options_.path + " cannot grow (" + why + "): recording of frames and raw bytes "
                       "stopped for this run, " + std::to_string(frames_lost) +
                       " frames not yet committed were given up; what was stored before is kept");
}

// Stopping while locked: a few more tries, then say loudly what is lost.
void Recorder::Writer::give_up_at_stop() {
    const auto until = Clock::now() + std::chrono::seconds(2);
    while (locked_since_ && Clock::now() < until) {
        std::this_thread::sleep_for(retry_pause);
        commit_now();
    }
    if (!locked_since_) return;
    write_errors.fetch_add(1, std::memory_order_relaxed);
    const std::string what = std::to_string(uncommitted_frames_) + " frames and " + std::to_string(backlog_.size()) +
                             " records not stored: the database stayed locked by another process until shutdown";
    if (options_.log) options_.log->error("recorder: {}", what);
    for (auto& w : backlog_)
        if (auto* f = std::get_if<FinishRun>(&w)) f->done->set_value(Error{what});
    settle_waiters(Error{what});
}

void Recorder::Writer::check_disk(Clock::time_point now) {
    next_disk_check_ = now + options_.disk_check_interval;
    const auto free = free_bytes(options_.path);
    if (!free) return;  // unknown: keep recording rather than stop a test on a failed query
    const bool low = *free < options_.min_free_bytes;
    if (low && !disk_low.load()) {
        // Store what is already taken, then refuse new data.
        close_chunk();
        for (auto& [source, buf] : raw_) write_raw(buf);
        disk_low.store(true);
        alarm("disk_low", "free space " + mib(*free) + " is below the minimum " + mib(options_.min_free_bytes) +
                              ": recording of frames and raw bytes stopped; stored data kept");
        commit_now_ = true;
    } else if (!low && disk_low.load()) {
        disk_low.store(false);
        alarm("disk_ok", "free space " + mib(*free) + " is back above the minimum " + mib(options_.min_free_bytes) +
                             ": recording resumed; frames pushed meanwhile were not stored");
    }
}

void Recorder::Writer::report_drops() {
    const std::uint64_t frames = inbox_.frames_dropped.load();
    if (frames > reported_frame_drops_) {
        alarm("queue_full", std::to_string(frames - reported_frame_drops_) + " frames dropped: recorder inbox full (" +
                                std::to_string(inbox_.frame_capacity()) + " frames)" +
                                (locked_since_ ? "; the database is locked by another process"
                                               : "; the disk or the writer is too slow"));
        reported_frame_drops_ = frames;
    }
    const std::uint64_t messages = inbox_.messages_dropped.load();
    if (messages > reported_message_drops_) {
        alarm("queue_full", std::to_string(messages - reported_message_drops_) +
                                " raw byte pieces, events, alarms or counters dropped: recorder inbox full");
        reported_message_drops_ = messages;
    }
}

void Recorder::Writer::alarm(std::string kind, std::string message) {
    if (options_.log) options_.log->warn("recorder alarm {}: {}", kind, message);
    if (options_.notify) options_.notify(kind, message);
    const std::size_t size = 64 + kind.size() + message.size();
    queue(AlarmRecord{run_, wall_now(), std::move(kind), std::move(message)}, size);
}

double Recorder::Writer::wall_now() const {
    return std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}

}  // namespace tensile::storage
