// The interface every source implements: move bytes from a device to the
// caller, and bytes from the caller to the device. Sources never parse.
//
// Contract for the daemon (one io_context, all handlers run on it):
//   - on_bytes gets each read chunk with the host-monotonic time of its arrival;
//   - on_state reports every state change; when the state leaves `connected`
//     the caller must call Parser::break_stream() so a torn record is dropped;
//   - on_gap is called when the link is lost (end_s = NaN) and again when bytes
//     flow again (end_s set): one gap, two calls.
// Errors on the data path are values (std::error_code), never exceptions.
#pragma once

#include <chrono>
#include <cmath>
#include <cstddef>
#include <functional>
#include <span>
#include <string>
#include <string_view>
#include <system_error>

namespace tensile::drivers {

enum class SourceState { stopped, connecting, connected, waiting, finished };
inline std::string_view name_of(SourceState s) {
    switch (s) {
        case SourceState::stopped: return "stopped";
        case SourceState::connecting: return "connecting";
        case SourceState::connected: return "connected";
        case SourceState::waiting: return "waiting to retry";
        case SourceState::finished: return "finished";
    }
    return "?";
}

struct GapEvent {
    std::string source;
    double start_s = NAN;  // host-monotonic time the link was found lost
    double end_s = NAN;    // first bytes after it came back; NaN while open
    std::string reason;
    [[nodiscard]] bool open() const { return std::isnan(end_s); }
};

struct SourceHandlers {
    std::function<void(std::span<const std::byte> bytes, double arrival_s)> on_bytes;
    std::function<void(SourceState state)> on_state;
    std::function<void(const GapEvent& gap)> on_gap;
};

class ByteSource {
public:
    using SendDone = std::function<void(std::error_code)>;
    virtual ~ByteSource() = default;
    virtual void start(SourceHandlers handlers) = 0;
    virtual void stop() = 0;
    // Writes `bytes` to the device. Completes with an error when not connected
    // or when the bounded send queue is full; never blocks.
    virtual void send(std::string bytes, SendDone done) = 0;
    [[nodiscard]] virtual const std::string& name() const = 0;
    [[nodiscard]] virtual SourceState state() const = 0;
};

// Host monotonic clock in seconds: the one clock all sample times refer to.
inline double host_now_s() {
    return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

}  // namespace tensile::drivers
