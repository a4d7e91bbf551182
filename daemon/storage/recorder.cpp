// Recorder front: start-up, the non-blocking push calls, flush and stop.
// The writing itself is in recorder_writer.cpp.
#include "recorder.hpp"

#include <spdlog/spdlog.h>

#include "frame_codec.hpp"
#include "recorder_writer.hpp"

namespace tensile::storage {

Result<std::unique_ptr<Recorder>> Recorder::start(RecorderOptions options) {
    if (options.frame_capacity == 0 || options.message_capacity == 0 || options.chunk_frames == 0 ||
        options.chunk_frames > max_frames_per_chunk)
        return Error{"recorder: capacities and chunk size must be positive (chunk at most 1048576 frames)"};
    auto store = Store::open(options.path, options.open);
    if (!store) return Error{store.error()};
    // Private constructor: make_unique cannot reach it.
    std::unique_ptr<Recorder> rec(new Recorder(std::move(options), nullptr));
    rec->writer_ = std::make_unique<Writer>(std::move(*store), rec->options_, rec->inbox_, rec->raw_in_flight_, rec->stopping_);
    rec->thread_ = std::thread([w = rec->writer_.get()] { w->run(); });
    return rec;
}

Recorder::Recorder(RecorderOptions options, std::unique_ptr<Writer> writer)
    : options_(std::move(options)),
      inbox_(options_.frame_capacity, options_.message_capacity),
      writer_(std::move(writer)) {}

Recorder::~Recorder() { stop(); }

void Recorder::begin_run(std::int64_t run) { inbox_.push(BeginRun{run}, true); }
void Recorder::end_run() { inbox_.push(EndRun{}, true); }

bool Recorder::try_push_raw(std::string_view source, std::string_view bytes, double arrival_s) {
    // The byte budget keeps raw pieces from growing memory past a fixed bound.
    const std::uint64_t before = raw_in_flight_.fetch_add(bytes.size(), std::memory_order_relaxed);
    if (before + bytes.size() > options_.raw_bytes_in_flight ||
        !inbox_.push(RawPiece{std::string(source), std::string(bytes), arrival_s})) {
        raw_in_flight_.fetch_sub(bytes.size(), std::memory_order_relaxed);
        if (before + bytes.size() > options_.raw_bytes_in_flight) inbox_.messages_dropped.fetch_add(1, std::memory_order_relaxed);
        return false;
    }
    return true;
}

bool Recorder::try_push_event(const Event& event) { return inbox_.push(event); }
bool Recorder::try_push_alarm(AlarmRecord alarm) { return inbox_.push(std::move(alarm)); }
bool Recorder::try_push_counter(CounterRecord counter) { return inbox_.push(std::move(counter)); }

void Recorder::set_state(std::int64_t run, RunState state, std::string cause, double unix_s) {
    inbox_.push(StateWrite{run, state, std::move(cause), unix_s}, true);
}

std::future<Status> Recorder::finish_run(std::int64_t run, RunState state, std::string cause, double unix_s,
                                         std::optional<std::string> results_json) {
    auto done = std::make_shared<std::promise<Status>>();
    auto future = done->get_future();
    if (!inbox_.push(FinishRun{run, state, std::move(cause), unix_s, std::move(results_json), done}, true))
        done->set_value(Error{"recorder inbox refused closing run " + std::to_string(run)});
    return future;
}

Status Recorder::flush() {
    if (!thread_.joinable()) return Error{"recorder is stopped"};
    auto done = std::make_shared<std::promise<Status>>();
    auto future = done->get_future();
    if (!inbox_.push(FlushRequest{done}, true)) return Error{"recorder inbox refused the flush request"};
    return future.get();
}

void Recorder::stop() {
    if (!thread_.joinable()) return;
    stopping_.store(true);
    inbox_.wake();
    thread_.join();
}

RecorderCounters Recorder::counters() const {
    RecorderCounters c;
    c.frames_queued = inbox_.frames_accepted();
    c.frames_dropped = inbox_.frames_dropped.load();
    c.messages_dropped = inbox_.messages_dropped.load();
    c.frames_waiting = inbox_.frames_waiting();
    c.frame_high_water = inbox_.frame_high_water();
    c.message_high_water = inbox_.message_high_water();
    if (writer_) {
        c.frames_written = writer_->frames_written.load();
        c.frames_committed = writer_->frames_committed.load();
        c.frames_refused_disk = writer_->frames_refused_disk.load();
        c.frames_without_run = writer_->frames_without_run.load();
        c.raw_bytes_written = writer_->raw_bytes_written.load();
        c.raw_bytes_refused = writer_->raw_bytes_refused.load();
        c.commits = writer_->commits.load();
        c.write_errors = writer_->write_errors.load();
        c.disk_low = writer_->disk_low.load();
        c.db_locked = writer_->db_locked.load();
        c.db_locked_s = writer_->db_locked_s.load();
        c.lock_episodes = writer_->lock_episodes.load();
        c.backlog_bytes = writer_->backlog_bytes.load();
        c.raw_chunks_packed = writer_->raw_chunks_packed.load();
        c.raw_chunks_quick = writer_->raw_chunks_quick.load();
    }
    return c;
}

}  // namespace tensile::storage
