// The broadcast point of the live feed: every WebSocket session registers
// here, and each message is built once (shared_ptr<const std::string>) and
// handed to every session's own bounded queue. The hub never waits on a
// client: a session whose queue is full drops itself and is counted.
//
// Runs on the io_context thread only; no locks. Sessions are held weakly, so
// a session that went away is simply skipped and pruned.
//
// Error policy: nothing here fails; a dead session is pruned.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

namespace tensile::monitor {

using Message = std::shared_ptr<const std::string>;

// What the hub needs from a session.
class LiveClient {
public:
    virtual ~LiveClient() = default;
    // Queues the message; returns false when the client was dropped for stalling.
    virtual bool deliver(const Message& message) = 0;
    // Drops the client when one write has been stuck longer than the limit.
    virtual void check_stall(double now_s) = 0;
};

class LiveHub {
public:
    static constexpr std::size_t max_clients = 32;

    // False when the hub is full (the caller answers 503).
    bool join(const std::shared_ptr<LiveClient>& client);
    void broadcast(const Message& message);
    void check_stalls(double now_s);
    void count_drop() { ++dropped_; }

    [[nodiscard]] std::size_t clients();
    [[nodiscard]] std::uint64_t dropped() const { return dropped_; }
    [[nodiscard]] std::uint64_t messages() const { return messages_; }

private:
    void prune();
    std::vector<std::weak_ptr<LiveClient>> clients_;
    std::uint64_t dropped_ = 0;
    std::uint64_t messages_ = 0;
};

inline Message make_message(std::string text) { return std::make_shared<const std::string>(std::move(text)); }

}  // namespace tensile::monitor
