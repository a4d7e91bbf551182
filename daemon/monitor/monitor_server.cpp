// Putting the monitor together; see monitor_server.hpp.
#include "monitor_server.hpp"

#include "api.hpp"
#include "daemon/tensiled/run_keeper.hpp"
#include "listener.hpp"
#include "run_reader.hpp"
#include "shared_state.hpp"

namespace tensile::monitor {

MonitorServer::MonitorServer(boost::asio::io_context& io, const MonitorConfig& config,
                             const std::filesystem::path& data_dir, RigService& rig, RunKeeper& keeper,
                             std::shared_ptr<spdlog::logger> log) {
    shared_ = std::make_shared<Shared>(Shared{Access(config.listen, config.token_file), log, {}, nullptr, nullptr, 0, false});
    reader_ = std::make_unique<RunReader>(io, keeper.database());
    feed_ = std::make_unique<LiveFeed>(io, rig, shared_->hub);
    shared_->api = std::make_shared<Api>(ApiContext{rig, keeper, *feed_, shared_->hub, shared_->access, *reader_, data_dir});
    std::weak_ptr<Api> api = shared_->api;
    shared_->hello = [api]() {
        nlohmann::json j = {{"type", "hello"}};
        if (auto a = api.lock()) j["status"] = a->status();
        return make_message(j.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace));
    };
    listener_ = std::make_shared<Listener>(io, config.listen, config.port, shared_);
    if (shared_->access.has_token())
        log->info("monitor: commands need the token in {}", shared_->access.token_file().string());
    else
        log->warn("monitor: no token file configured (monitor.token_file); commands are refused");
}

MonitorServer::~MonitorServer() { stop(); }

void MonitorServer::start() {
    listener_->run();
    feed_->start();
}

void MonitorServer::stop() {
    if (shared_->stopped) return;
    shared_->stopped = true;
    listener_->stop();
    feed_->stop();
    reader_->stop();
}

std::uint16_t MonitorServer::port() const { return listener_->port(); }

}  // namespace tensile::monitor
