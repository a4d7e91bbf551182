// Recorder::Writer: the body of the recorder's thread. See recorder_writer.hpp.
#include "recorder_writer.hpp"

#include <cmath>
#include <filesystem>
#include <spdlog/spdlog.h>
#include <sys/statvfs.h>

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

}  // namespace

Recorder::Writer::Writer(Store store, const RecorderOptions& options, RecorderInbox& inbox,
                         std::atomic<std::uint64_t>& raw_in_flight, const std::atomic<bool>& stopping)
    : store_(std::move(store)), options_(options), inbox_(inbox), raw_in_flight_(raw_in_flight), stopping_(stopping) {
    chunk_.reserve(options_.chunk_frames);
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
        inbox_.take(frames, messages, options_.poll_interval, stopping_);
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
        if (stop || Clock::now() >= next_commit_) commit();
        if (stop) return;
    }
}

void Recorder::Writer::handle(Message& m) {
    if (auto* begin = std::get_if<BeginRun>(&m.payload)) {
        if (run_) close_run();
        run_ = begin->run;
        // A run may be resumed by a later recorder; continue its numbering.
        chunk_seq_ = 0;
        run_frame_index_ = 0;
        if (auto q = store_.db().prepare("SELECT coalesce(max(seq) + 1, 0), coalesce(sum(frame_count), 0) FROM frame_chunks WHERE run_id = ?")) {
            q->bind(1, *run_);
            if (auto row = q->step(); row && *row) { chunk_seq_ = q->int64(0); run_frame_index_ = q->int64(1); }
        }
    } else if (std::holds_alternative<EndRun>(m.payload)) {
        close_run();
    } else if (auto* raw = std::get_if<RawPiece>(&m.payload)) {
        raw_in_flight_.fetch_sub(raw->bytes.size(), std::memory_order_relaxed);
        if (!run_ || disk_low.load()) {
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
        begin_if_needed();
        check(store_.add_event(*run_, *event), "event");
    } else if (auto* alarm_rec = std::get_if<AlarmRecord>(&m.payload)) {
        begin_if_needed();
        check(store_.add_alarm(*alarm_rec), "alarm");
    } else if (auto* counter = std::get_if<CounterRecord>(&m.payload)) {
        begin_if_needed();
        check(store_.add_counter(*counter), "counter");
    } else if (auto* flush = std::get_if<FlushRequest>(&m.payload)) {
        const std::uint64_t errors_before = write_errors.load();
        commit();
        if (write_errors.load() == errors_before) flush->done->set_value(Done{});
        else flush->done->set_value(Error{"recorder: write errors since the last commit (see the log)"});
    }
}

void Recorder::Writer::take_frames(std::span<const Frame> frames) {
    if (frames.empty()) return;
    if (!run_) { frames_without_run.fetch_add(frames.size(), std::memory_order_relaxed); return; }
    if (disk_low.load()) {
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

void Recorder::Writer::write_tail_chunk() {
    if (!run_ || !chunk_dirty_ || chunk_.empty()) return;
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
    begin_if_needed();
    check(store_.write_frame_chunk(row), "frame chunk");
    chunk_dirty_ = false;
}

void Recorder::Writer::close_chunk() {
    if (chunk_.empty()) return;
    write_tail_chunk();
    ++chunk_seq_;
    chunk_.clear();
}

void Recorder::Writer::write_raw(RawBuffer& buf) {
    if (!run_ || buf.chunk.bytes.empty()) return;
    auto [it, fresh] = raw_seq_.try_emplace(buf.chunk.source, 0);
    if (fresh) {
        if (auto q = store_.db().prepare("SELECT coalesce(max(seq) + 1, 0) FROM raw_chunks WHERE run_id = ? AND source = ?")) {
            q->bind(1, *run_).bind(2, buf.chunk.source);
            if (auto row = q->step(); row && *row) it->second = q->int64(0);
        }
    }
    buf.chunk.seq = it->second++;
    begin_if_needed();
    check(store_.write_raw_chunk(*run_, buf.chunk, buf.first_s, buf.last_s), "raw chunk");
    raw_bytes_written.fetch_add(buf.chunk.bytes.size(), std::memory_order_relaxed);
    buf.chunk.bytes.clear();
    buf.chunk.arrivals.clear();
    buf.first_s.reset();
    buf.last_s.reset();
}

void Recorder::Writer::close_run() {
    close_chunk();
    for (auto& [source, buf] : raw_) write_raw(buf);
    raw_.clear();
    raw_seq_.clear();
    run_.reset();
}

void Recorder::Writer::commit() {
    write_tail_chunk();
    for (auto& [source, buf] : raw_) write_raw(buf);
    report_drops();
    if (in_transaction_) {
        in_transaction_ = false;
        if (auto s = store_.db().exec("COMMIT"); !s) {
            (void)store_.db().exec("ROLLBACK");
            check(s, "commit");
        } else {
            commits.fetch_add(1, std::memory_order_relaxed);
            frames_committed.fetch_add(uncommitted_frames_, std::memory_order_relaxed);
        }
    }
    uncommitted_frames_ = 0;
    next_commit_ = Clock::now() + options_.commit_interval;
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
        commit();
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
                                std::to_string(inbox_.frame_capacity()) + " frames); the disk or the writer is too slow");
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
    begin_if_needed();
    check(store_.add_alarm(AlarmRecord{run_, wall_now(), std::move(kind), std::move(message)}), "alarm");
}

void Recorder::Writer::check(const Status& s, const char* what) {
    if (s) return;
    write_errors.fetch_add(1, std::memory_order_relaxed);
    if (options_.log) options_.log->error("recorder: writing {} failed: {}", what, s.error());
}

bool Recorder::Writer::begin_if_needed() {
    if (in_transaction_) return true;
    auto s = store_.db().exec("BEGIN IMMEDIATE");
    check(s, "begin");
    in_transaction_ = s.ok();
    return in_transaction_;
}

double Recorder::Writer::wall_now() const {
    return std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
}

}  // namespace tensile::storage
