// See tcp_source.hpp. Every async handler holds a shared_ptr to the source and
// checks `generation_`, so handlers of an old connection that complete after a
// reconnect (or after stop) do nothing.
#include "tcp_source.hpp"

#include <netinet/in.h>
#include <netinet/tcp.h>
#include <sys/socket.h>

#include <boost/asio/connect.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/write.hpp>

namespace tensile::drivers {

namespace asio = boost::asio;
using asio::ip::tcp;

std::shared_ptr<TcpSource> TcpSource::create(asio::io_context& io, TcpSourceConfig cfg,
                                             std::shared_ptr<spdlog::logger> log) {
    return std::shared_ptr<TcpSource>(new TcpSource(io, std::move(cfg), std::move(log)));
}

TcpSource::TcpSource(asio::io_context& io, TcpSourceConfig cfg, std::shared_ptr<spdlog::logger> log)
    : io_(io),
      cfg_(std::move(cfg)),
      keeper_(cfg_.name, std::move(log)),
      backoff_(cfg_.backoff, static_cast<std::uint32_t>(std::hash<std::string>{}(cfg_.name) ^ cfg_.port)),
      resolver_(io),
      socket_(io),
      timer_(io),
      watchdog_(io),
      buf_(cfg_.read_chunk),
      sendq_(cfg_.max_send_queue) {}

void TcpSource::start(SourceHandlers handlers) {
    keeper_.set_handlers(std::move(handlers));
    running_ = true;
    connect();
}

void TcpSource::stop() {
    running_ = false;
    ++generation_;
    boost::system::error_code ignored;
    resolver_.cancel();
    timer_.cancel();
    watchdog_.cancel();
    socket_.close(ignored);
    sendq_.fail_all(io_, std::errc::operation_canceled);
    keeper_.change(SourceState::stopped, "");
}

void TcpSource::connect() {
    const auto gen = ++generation_;
    // Only the first attempt is a state change; retries happen inside `waiting`.
    if (keeper_.state() == SourceState::stopped)
        keeper_.change(SourceState::connecting, "to " + cfg_.host + ":" + std::to_string(cfg_.port));
    auto self = shared_from_this();
    after(timer_, cfg_.connect_timeout_s, [this, self, gen] {
        if (gen != generation_) return;
        resolver_.cancel();
        boost::system::error_code ignored;
        socket_.close(ignored);  // the pending connect completes with operation_aborted
    });
    resolver_.async_resolve(cfg_.host, std::to_string(cfg_.port),
                            [this, self, gen](boost::system::error_code ec, tcp::resolver::results_type results) {
                                if (gen != generation_) return;
                                if (ec) return fail("cannot resolve " + cfg_.host + ": " + ec.message());
                                asio::async_connect(socket_, results,
                                                    [this, self, gen](boost::system::error_code ec2, const tcp::endpoint&) {
                                                        if (gen != generation_) return;
                                                        if (ec2)
                                                            return fail(ec2 == asio::error::operation_aborted
                                                                            ? std::string("connect timed out")
                                                                            : ec2.message());
                                                        on_connected();
                                                    });
                            });
}

void TcpSource::on_connected() {
    timer_.cancel();
    boost::system::error_code ignored;
    socket_.set_option(tcp::no_delay(true), ignored);
    if (cfg_.keepalive) {
        socket_.set_option(asio::socket_base::keep_alive(true), ignored);
        const int fd = socket_.native_handle();
        // Linux defaults wait two hours before the first probe; a lab link must be noticed in seconds.
        ::setsockopt(fd, IPPROTO_TCP, TCP_KEEPIDLE, &cfg_.keepalive_idle_s, sizeof(int));
        ::setsockopt(fd, IPPROTO_TCP, TCP_KEEPINTVL, &cfg_.keepalive_interval_s, sizeof(int));
        ::setsockopt(fd, IPPROTO_TCP, TCP_KEEPCNT, &cfg_.keepalive_count, sizeof(int));
    }
    backoff_.reset();
    last_rx_s_ = host_now_s();
    keeper_.change(SourceState::connected, "to " + cfg_.host + ":" + std::to_string(cfg_.port));
    read();
    if (cfg_.silence_timeout_s > 0) watch_silence();
    if (!sendq_.empty() && !sendq_.writing) write_next();
}

void TcpSource::read() {
    auto self = shared_from_this();
    const auto gen = generation_;
    socket_.async_read_some(asio::buffer(buf_), [this, self, gen](boost::system::error_code ec, std::size_t n) {
        if (gen != generation_) return;
        if (ec) return fail(ec == asio::error::eof ? std::string("peer closed the connection") : ec.message());
        last_rx_s_ = host_now_s();
        keeper_.bytes(std::span<const std::byte>(buf_.data(), n));
        if (gen == generation_) read();  // a handler may have stopped us
    });
}

void TcpSource::watch_silence() {
    auto self = shared_from_this();
    const auto gen = generation_;
    watchdog_.expires_after(std::chrono::duration_cast<std::chrono::steady_clock::duration>(
        std::chrono::duration<double>(cfg_.silence_timeout_s / 4)));
    watchdog_.async_wait([this, self, gen](boost::system::error_code ec) {
        if (ec || gen != generation_) return;
        if (host_now_s() - last_rx_s_ > cfg_.silence_timeout_s) return fail("no data for the silence timeout");
        watch_silence();
    });
}

void TcpSource::fail(const std::string& reason) {
    if (!running_) return;
    ++generation_;
    boost::system::error_code ignored;
    socket_.close(ignored);
    timer_.cancel();
    watchdog_.cancel();
    sendq_.fail_all(io_, std::errc::not_connected);  // never replayed on a later connection
    keeper_.failed(reason);
    schedule_retry();
}

void TcpSource::schedule_retry() {
    auto self = shared_from_this();
    const auto gen = generation_;
    after(timer_, backoff_.next(), [this, self, gen] {
        if (gen == generation_ && running_) connect();
    });
}

void TcpSource::send(std::string bytes, SendDone done) {
    if (!sendq_.push(io_, keeper_.state() == SourceState::connected, std::move(bytes), std::move(done))) return;
    if (!sendq_.writing) write_next();
}

void TcpSource::write_next() {
    if (sendq_.empty()) return;
    sendq_.writing = true;
    auto self = shared_from_this();
    const auto gen = generation_;
    asio::async_write(socket_, asio::buffer(sendq_.front()), [this, self, gen](boost::system::error_code ec, std::size_t) {
        if (gen != generation_) return;  // connection gone; the queue was left for the next one
        sendq_.pop(ec ? std::error_code(ec.value(), std::system_category()) : std::error_code{});
        if (ec) return fail("write failed: " + ec.message());
        write_next();
    });
}

}  // namespace tensile::drivers
