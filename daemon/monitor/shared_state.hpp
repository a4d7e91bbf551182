// What every connection of the monitor shares: access rules, the live hub,
// the API, connection limits and the log. Held by shared_ptr in each session,
// so a handler still queued on the io_context after the server stopped finds
// it alive. Runs on the io_context thread only.
#pragma once

#include <chrono>
#include <functional>
#include <memory>

#include <spdlog/spdlog.h>

#include "access.hpp"
#include "live_hub.hpp"

namespace tensile::monitor {

class Api;

struct Shared {
    static constexpr std::size_t max_http_sessions = 64;
    static constexpr std::size_t body_limit = 64 * 1024;
    static constexpr std::chrono::seconds read_timeout{30};

    Access access;
    std::shared_ptr<spdlog::logger> log;
    LiveHub hub;
    std::shared_ptr<Api> api;
    std::function<Message()> hello;  // the snapshot a new live client gets first
    std::size_t http_sessions = 0;
    bool stopped = false;
};

inline double steady_now_s() {
    return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

}  // namespace tensile::monitor
