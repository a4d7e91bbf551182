// The bounded hand-off between acquisition (any thread) and the recorder's
// writer thread. Frames and messages wait in two vectors whose capacity is
// fixed at start; the writer swaps each whole vector for an empty one under
// the lock, so a producer holds the lock only to copy its own items and the
// writer only for the swap. A full inbox refuses the item and counts it;
// nothing here ever blocks on the disk or grows past its capacity.
// Messages carry the number of frames pushed before them, so the writer keeps
// frames and messages in the order they were pushed.
// Error policy: no errors; refusals are return values plus counters.
#pragma once

#include <atomic>
#include <condition_variable>
#include <cstdint>
#include <future>
#include <memory>
#include <mutex>
#include <optional>
#include <span>
#include <string>
#include <variant>
#include <vector>

#include "engine/event.hpp"
#include "engine/frame.hpp"
#include "sqlite_db.hpp"
#include "store_types.hpp"

namespace tensile::storage {

struct BeginRun { std::int64_t run; };
struct EndRun {};
struct RawPiece { std::string source; std::string bytes; double arrival_s; };
struct FlushRequest { std::shared_ptr<std::promise<Status>> done; };
// A live run's state change, and its close (results, final state, digest).
struct StateWrite { std::int64_t run; RunState state; std::string cause; double unix_s; };
struct FinishRun {
    std::int64_t run;
    RunState state;
    std::string cause;
    double unix_s;
    std::optional<std::string> results_json;
    std::shared_ptr<std::promise<Status>> done;
};
using Payload = std::variant<BeginRun, EndRun, RawPiece, Event, AlarmRecord, CounterRecord, FlushRequest, StateWrite, FinishRun>;

struct Message {
    std::uint64_t frames_before = 0;  // frames pushed (accepted) before this message
    Payload payload;
};

class RecorderInbox {
public:
    RecorderInbox(std::size_t frame_capacity, std::size_t message_capacity)
        : frame_capacity_(frame_capacity), message_capacity_(message_capacity) {
        frames_.reserve(frame_capacity);
        messages_.reserve(message_capacity + control_reserve);
    }

    // Accepts as many frames as fit; the rest are counted as dropped.
    std::size_t push_frames(std::span<const Frame> frames) {
        std::size_t taken = 0;
        {
            std::lock_guard lock(mutex_);
            taken = std::min(frames.size(), frame_capacity_ - frames_.size());
            frames_.insert(frames_.end(), frames.begin(), frames.begin() + static_cast<std::ptrdiff_t>(taken));
            frames_accepted_ += taken;
            if (frames_.size() > frame_high_water_) frame_high_water_ = frames_.size();
        }
        if (taken < frames.size()) frames_dropped.fetch_add(frames.size() - taken, std::memory_order_relaxed);
        return taken;
    }

    // Data messages respect the capacity; control messages (begin/end run,
    // flush) come from the control thread, are few, and always get in, up to
    // a small reserve.
    bool push(Payload payload, bool control = false) {
        {
            std::lock_guard lock(mutex_);
            const std::size_t limit = message_capacity_ + (control ? control_reserve : 0);
            if (messages_.size() >= limit) {
                messages_dropped.fetch_add(1, std::memory_order_relaxed);
                return false;
            }
            messages_.push_back(Message{frames_accepted_, std::move(payload)});
            if (messages_.size() > message_high_water_) message_high_water_ = messages_.size();
        }
        if (control) wake_.notify_one();
        return true;
    }

    // Writer side: waits up to `wait` (or until woken), then takes everything.
    template <class Duration>
    void take(std::vector<Frame>& frames, std::vector<Message>& messages, Duration wait, const std::atomic<bool>& stopping) {
        std::unique_lock lock(mutex_);
        if (frames_.empty() && messages_.empty() && !stopping.load() && !woken_)
            wake_.wait_for(lock, wait, [&] { return stopping.load() || !messages_.empty() || woken_; });
        woken_ = false;
        frames.clear();
        messages.clear();
        frames.swap(frames_);
        messages.swap(messages_);
        // The vectors handed back keep their reserved capacity, so producers never allocate for them.
        if (frames_.capacity() < frame_capacity_) frames_.reserve(frame_capacity_);
        if (messages_.capacity() < message_capacity_ + control_reserve) messages_.reserve(message_capacity_ + control_reserve);
    }

    // Ends the writer's current wait (stop, or a commit came back).
    void wake() {
        {
            std::lock_guard lock(mutex_);
            woken_ = true;
        }
        wake_.notify_one();
    }

    std::size_t frames_waiting() const { std::lock_guard lock(mutex_); return frames_.size(); }
    std::uint64_t frames_accepted() const { std::lock_guard lock(mutex_); return frames_accepted_; }
    std::size_t frame_high_water() const { std::lock_guard lock(mutex_); return frame_high_water_; }
    std::size_t message_high_water() const { std::lock_guard lock(mutex_); return message_high_water_; }
    std::size_t frame_capacity() const { return frame_capacity_; }

    std::atomic<std::uint64_t> frames_dropped{0};
    std::atomic<std::uint64_t> messages_dropped{0};

private:
    static constexpr std::size_t control_reserve = 64;
    const std::size_t frame_capacity_;
    const std::size_t message_capacity_;
    mutable std::mutex mutex_;
    std::condition_variable wake_;
    std::vector<Frame> frames_;
    std::vector<Message> messages_;
    std::uint64_t frames_accepted_ = 0;
    std::size_t frame_high_water_ = 0;
    std::size_t message_high_water_ = 0;
    bool woken_ = false;
};

}  // namespace tensile::storage
