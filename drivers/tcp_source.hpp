// TCP client source for devices behind a serial device server or speaking raw
// TCP. Connects with a timeout, enables keepalive, reads asynchronously, and on
// any error closes, reports a gap and reconnects with capped exponential
// backoff and jitter. Optional silence timeout: a peer that sends nothing for
// that long is treated as gone (keepalive alone takes much longer to notice).
// Never throws after construction; errors are logged and become state changes.
#pragma once

#include <cstdint>
#include <deque>
#include <memory>
#include <string>
#include <vector>

#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/steady_timer.hpp>

#include "byte_source.hpp"
#include "link_keeper.hpp"

namespace tensile::drivers {

struct TcpSourceConfig {
    std::string name;
    std::string host;
    std::uint16_t port = 0;
    double connect_timeout_s = 2.0;
    BackoffConfig backoff;
    bool keepalive = true;
    int keepalive_idle_s = 5;   // Linux TCP_KEEPIDLE / TCP_KEEPINTVL / TCP_KEEPCNT
    int keepalive_interval_s = 1;
    int keepalive_count = 3;
    double silence_timeout_s = 0.0;  // 0 = off
    std::size_t read_chunk = 16384;
    std::size_t max_send_queue = 16;
};

class TcpSource final : public ByteSource, public std::enable_shared_from_this<TcpSource> {
public:
    static std::shared_ptr<TcpSource> create(boost::asio::io_context& io, TcpSourceConfig cfg,
                                             std::shared_ptr<spdlog::logger> log = nullptr);

    void start(SourceHandlers handlers) override;
    void stop() override;
    void send(std::string bytes, SendDone done) override;
    [[nodiscard]] const std::string& name() const override { return keeper_.name(); }
    [[nodiscard]] SourceState state() const override { return keeper_.state(); }

private:
    TcpSource(boost::asio::io_context& io, TcpSourceConfig cfg, std::shared_ptr<spdlog::logger> log);
    void connect();
    void on_connected();
    void read();
    void fail(const std::string& reason);
    void schedule_retry();
    void write_next();
    void watch_silence();

    boost::asio::io_context& io_;
    TcpSourceConfig cfg_;
    LinkKeeper keeper_;
    Backoff backoff_;
    boost::asio::ip::tcp::resolver resolver_;
    boost::asio::ip::tcp::socket socket_;
    boost::asio::steady_timer timer_;     // connect timeout, then retry delay
    boost::asio::steady_timer watchdog_;  // silence timeout
    std::vector<std::byte> buf_;
    SendQueue sendq_;
    bool running_ = false;
    std::uint64_t generation_ = 0;  // bumps per connection so stale handlers ignore themselves
    double last_rx_s_ = 0;
};

}  // namespace tensile::drivers
