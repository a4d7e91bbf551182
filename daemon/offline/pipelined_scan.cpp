// Two-thread table reading; see pipelined_scan.hpp.
#include "pipelined_scan.hpp"

#include <algorithm>
#include <condition_variable>
#include <deque>
#include <mutex>
#include <optional>
#include <thread>

#include <sys/mman.h>
#include <unistd.h>

namespace tensile {

namespace {

constexpr std::size_t chunk_frames = 16384;
constexpr std::size_t queue_chunks = 4;
// The first chunks are handed over smaller (1024 frames, doubling up to
// chunk_frames), so the consumer starts within a few hundred microseconds
// instead of waiting for a whole chunk to be read.
constexpr std::size_t first_chunk_frames = 1024;

// A fresh chunk is 512 KB of untouched memory. Filling it page by page costs
// one page fault per 4 KB on the reading thread; one MADV_POPULATE_WRITE call
// maps the whole buffer in at once, several times cheaper where faults are
// dear (virtual machines). Kernels before Linux 5.14 refuse it: no change.
// Only the frames the chunk will hold: the first chunks are handed over
// small, and mapping their unused tails in would only add resident memory.
void map_in(std::vector<Frame>& v, std::size_t frames) {
#ifdef MADV_POPULATE_WRITE
    static const auto page = static_cast<std::uintptr_t>(::sysconf(_SC_PAGESIZE));
    const auto from = (reinterpret_cast<std::uintptr_t>(v.data()) + page - 1) / page * page;
    const auto to = (reinterpret_cast<std::uintptr_t>(v.data() + std::min(frames, v.capacity()))) / page * page;
    if (to > from) ::madvise(reinterpret_cast<void*>(from), to - from, MADV_POPULATE_WRITE);
#else
    (void)v;
    (void)frames;
#endif
}

class ChunkQueue {
public:
    void push(std::vector<Frame>&& chunk) {
        std::unique_lock lock(mutex_);
        room_.wait(lock, [&] { return full_.size() < queue_chunks; });
        full_.push_back(std::move(chunk));
        ready_.notify_one();
    }
    // Empty optional once the reader is done and everything was taken.
    std::optional<std::vector<Frame>> pop() {
        std::unique_lock lock(mutex_);
        ready_.wait(lock, [&] { return !full_.empty() || done_; });
        if (full_.empty()) return std::nullopt;
        auto chunk = std::move(full_.front());
        full_.pop_front();
        room_.notify_one();
        return chunk;
    }
    void recycle(std::vector<Frame>&& chunk) {
        chunk.clear();
        std::lock_guard lock(mutex_);
        spare_.push_back(std::move(chunk));
    }
    // A chunk to fill with up to `frames` frames.
    std::vector<Frame> fresh(std::size_t frames) {
        std::lock_guard lock(mutex_);
        if (spare_.empty()) {
            std::vector<Frame> v;
            v.reserve(chunk_frames);
            map_in(v, frames);
            return v;
        }
        auto v = std::move(spare_.back());
        spare_.pop_back();
        return v;
    }
    void finish() {
        std::lock_guard lock(mutex_);
        done_ = true;
        ready_.notify_all();
    }

private:
    std::mutex mutex_;
    std::condition_variable ready_, room_;
    std::deque<std::vector<Frame>> full_;
    std::vector<std::vector<Frame>> spare_;
    bool done_ = false;
};

struct ChunkingSink : FrameSink {
    ChunkQueue& queue;
    FrameSink& consumer;
    std::vector<Frame> chunk;
    std::size_t limit = first_chunk_frames;  // frames in the chunk being filled
    ChunkingSink(ChunkQueue& q, FrameSink& c) : queue(q), consumer(c), chunk(q.fresh(first_chunk_frames)) {}
    void passed(std::size_t offset) override { consumer.passed(offset); }
    void take(const Frame& f) override {
        chunk.push_back(f);
        if (chunk.size() == limit) hand_over();
    }
    void take_all(std::span<const Frame> frames) override {
        while (!frames.empty()) {
            const std::size_t n = std::min(frames.size(), limit - chunk.size());
            chunk.insert(chunk.end(), frames.begin(), frames.begin() + static_cast<std::ptrdiff_t>(n));
            frames = frames.subspan(n);
            if (chunk.size() == limit) hand_over();
        }
    }
    void hand_over() {
        queue.push(std::move(chunk));
        limit = std::min(2 * limit, chunk_frames);
        chunk = queue.fresh(limit);
    }
    void flush() {
        if (!chunk.empty()) queue.push(std::move(chunk));
    }
};

}  // namespace

Result<TableInfo> scan_table_pipelined(std::string_view text, const TableLayout& layout, FrameSink& sink) {
    ChunkQueue queue;
    std::optional<Result<TableInfo>> outcome;
    std::thread reader([&] {
        ChunkingSink chunker(queue, sink);
        outcome.emplace(scan_table(text, layout, chunker));
        chunker.flush();
        queue.finish();
    });
    while (auto chunk = queue.pop()) {
        sink.take_all(*chunk);
        queue.recycle(std::move(*chunk));
    }
    reader.join();
    return std::move(*outcome);
}

}  // namespace tensile
