// The monitor inside tensiled: HTTP API, live WebSocket feed, /metrics and
// the page, all on the daemon's io_context. The daemon's main builds one,
// forwards the rig observers to feed(), calls start() before io.run() and
// stop() when shutting down.
//
// Error policy: construction is start-up and throws std::runtime_error (bad
// address, port in use, unreadable token file, non-loopback without a
// token); once running nothing here can stop the rig.
#pragma once

#include <filesystem>
#include <memory>

#include <boost/asio/io_context.hpp>
#include <spdlog/spdlog.h>

#include "config/daemon_config.hpp"
#include "live_feed.hpp"

namespace tensile {
class RunKeeper;
}

namespace tensile::monitor {

struct Shared;
class Listener;
class RunReader;

class MonitorServer {
public:
    MonitorServer(boost::asio::io_context& io, const MonitorConfig& config, const std::filesystem::path& data_dir,
                  RigService& rig, RunKeeper& keeper, std::shared_ptr<spdlog::logger> log);
    ~MonitorServer();

    void start();
    void stop();
    [[nodiscard]] std::uint16_t port() const;
    // The rig's observers call these.
    LiveFeed& feed() { return *feed_; }

private:
    std::shared_ptr<Shared> shared_;
    std::unique_ptr<RunReader> reader_;
    std::unique_ptr<LiveFeed> feed_;
    std::shared_ptr<Listener> listener_;
};

}  // namespace tensile::monitor
