// What TCP and serial sources share: timed waits (after), capped exponential backoff with jitter,
// the state machine's one-log-line-per-change policy, gap bookkeeping, and
// the bounded queue of commands waiting to be written.
//
// Logging policy: every state change is one line. While a device stays away,
// repeated failed attempts with the same reason are logged at debug level and
// summarised in the line that reports the reconnection, so a dead device does
// not flood the log.
#pragma once

#include <chrono>
#include <deque>
#include <memory>
#include <random>
#include <string>
#include <utility>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <boost/asio/post.hpp>

#include <spdlog/spdlog.h>

#include "byte_source.hpp"

namespace tensile::drivers {

// Calls `then` after `seconds` on `timer` unless the wait is cancelled (a new
// attempt, or the source stopping, cancels it). The sources' timeouts and
// retry delays all go through here.
template <class Then>
void after(boost::asio::steady_timer& timer, double seconds, Then then) {
    timer.expires_after(std::chrono::duration_cast<std::chrono::steady_clock::duration>(std::chrono::duration<double>(seconds)));
    timer.async_wait([then = std::move(then)](boost::system::error_code ec) {
        if (!ec) then();
    });
}

struct BackoffConfig {
    double initial_s = 0.1;
    double max_s = 1.0;     // cap; keeps reconnection within ~max_s of the device coming back
    double jitter = 0.2;    // ± fraction, so several sources do not retry in lockstep
};

class Backoff {
public:
    Backoff(BackoffConfig cfg, std::uint32_t seed) : cfg_(cfg), rng_(seed) {}
    // Delay before the next attempt; doubles up to the cap.
    double next() {
        const double base = current_ > 0 ? current_ : cfg_.initial_s;
        current_ = std::min(base * 2.0, cfg_.max_s);
        std::uniform_real_distribution<double> j(1.0 - cfg_.jitter, 1.0 + cfg_.jitter);
        return std::min(base, cfg_.max_s) * j(rng_);
    }
    void reset() { current_ = 0; }

private:
    BackoffConfig cfg_;
    std::minstd_rand rng_;
    double current_ = 0;
};

// Commands waiting to be written to a device, bounded; shared by the sources
// that can send. Never replayed on a later connection: a stale "resume" is
// worse than none, so a lost link fails them all.
class SendQueue {
public:
    using Done = ByteSource::SendDone;
    explicit SendQueue(std::size_t max) : max_(max) {}

    // Queues `bytes` unless the link is down or the queue full, in which case
    // `done` is posted with the reason and false returned.
    bool push(boost::asio::io_context& io, bool connected, std::string bytes, Done done) {
        if (!connected || q_.size() >= max_) {
            const auto err = !connected ? std::errc::not_connected : std::errc::no_buffer_space;
            if (done) boost::asio::post(io, [d = std::move(done), err] { d(std::make_error_code(err)); });
            return false;
        }
        q_.emplace_back(std::move(bytes), std::move(done));
        return true;
    }
    // Fails everything queued with `why` (posted, so no handler runs inside the caller).
    void fail_all(boost::asio::io_context& io, std::errc why) {
        for (auto& [data, done] : q_)
            if (done) boost::asio::post(io, [d = std::move(done), why] { d(std::make_error_code(why)); });
        q_.clear();
        writing = false;
    }
    [[nodiscard]] bool empty() const { return q_.empty(); }
    [[nodiscard]] const std::string& front() const { return q_.front().first; }
    // The front write completed with `ec`: removes it and tells its sender.
    void pop(std::error_code ec) {
        writing = false;
        auto done = std::move(q_.front().second);
        q_.pop_front();
        if (done) done(ec);
    }

    bool writing = false;  // a write of front() is in flight

private:
    std::size_t max_;
    std::deque<std::pair<std::string, Done>> q_;
};

class LinkKeeper {
public:
    LinkKeeper(std::string name, std::shared_ptr<spdlog::logger> log)
        : name_(std::move(name)), log_(log ? std::move(log) : spdlog::default_logger()) {}

    void set_handlers(SourceHandlers h) { handlers_ = std::move(h); }
    [[nodiscard]] SourceState state() const { return state_; }
    [[nodiscard]] const std::string& name() const { return name_; }
    spdlog::logger& log() { return *log_; }

    void change(SourceState s, std::string_view detail) {
        if (s == state_) return;
        state_ = s;
        if (s == SourceState::connected && failed_attempts_ > 0)
            log_->info("source {}: {} {} (after {} failed attempts)", name_, name_of(s), detail, failed_attempts_);
        else
            log_->info("source {}: {} {}", name_, name_of(s), detail);
        if (s == SourceState::connected) failed_attempts_ = 0;
        if (handlers_.on_state) handlers_.on_state(s);
    }

    // An attempt failed while already waiting: quiet, counted.
    void attempt_failed(std::string_view reason) {
        ++failed_attempts_;
        log_->debug("source {}: attempt {} failed: {}", name_, failed_attempts_, reason);
    }

    // An attempt or the link itself failed, whichever state the source was in:
    // a link that was up opens a gap and goes waiting, a first attempt goes
    // waiting, and retries while waiting stay quiet (counted).
    void failed(std::string_view reason) {
        if (state_ == SourceState::connected) {
            lost(reason);
            change(SourceState::waiting, "(" + std::string(reason) + ")");
        } else if (state_ == SourceState::connecting) {
            change(SourceState::waiting, "(" + std::string(reason) + ")");
        } else {
            attempt_failed(reason);
        }
    }

    // The link was up and is now gone: opens a gap (once).
    void lost(std::string_view reason) {
        if (!std::isnan(gap_.start_s)) return;  // already open
        gap_ = GapEvent{name_, host_now_s(), NAN, std::string(reason)};
        if (handlers_.on_gap) handlers_.on_gap(gap_);
    }

    void bytes(std::span<const std::byte> b) {
        const double now = host_now_s();
        if (!std::isnan(gap_.start_s)) {
            gap_.end_s = now;
            log_->info("source {}: data again after a gap of {:.3f} s", name_, gap_.end_s - gap_.start_s);
            if (handlers_.on_gap) handlers_.on_gap(gap_);
            gap_ = GapEvent{};
        }
        if (handlers_.on_bytes) handlers_.on_bytes(b, now);
    }

private:
    std::string name_;
    std::shared_ptr<spdlog::logger> log_;
    SourceHandlers handlers_;
    SourceState state_ = SourceState::stopped;
    GapEvent gap_;
    unsigned failed_attempts_ = 0;
};

}  // namespace tensile::drivers
