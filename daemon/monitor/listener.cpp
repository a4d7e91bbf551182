// Accepting connections; see listener.hpp.
#include "listener.hpp"

#include <stdexcept>

#include "http_session.hpp"
#include "shared_state.hpp"

namespace tensile::monitor {

namespace asio = boost::asio;
using tcp = asio::ip::tcp;

Listener::Listener(asio::io_context& io, const std::string& address, std::uint16_t port, std::shared_ptr<Shared> shared)
    : io_(io), acceptor_(io), shared_(std::move(shared)) {
    boost::system::error_code ec;
    const auto ip = asio::ip::make_address(address == "localhost" ? "127.0.0.1" : address, ec);
    if (ec) throw std::runtime_error("monitor.listen: '" + address + "' is not an IP address");
    const tcp::endpoint endpoint(ip, port);
    acceptor_.open(endpoint.protocol(), ec);
    if (!ec) acceptor_.set_option(asio::socket_base::reuse_address(true), ec);
    if (!ec) acceptor_.bind(endpoint, ec);
    if (!ec) acceptor_.listen(asio::socket_base::max_listen_connections, ec);
    if (ec)
        throw std::runtime_error("monitor: cannot listen on " + address + ":" + std::to_string(port) + ": " + ec.message());
    port_ = acceptor_.local_endpoint().port();
}

void Listener::stop() {
    boost::system::error_code ec;
    acceptor_.close(ec);
}

void Listener::accept_next() {
    acceptor_.async_accept([self = shared_from_this()](boost::system::error_code ec, tcp::socket s) {
        if (ec == asio::error::operation_aborted || self->shared_->stopped) return;
        if (ec) {
            self->shared_->log->warn("monitor: accept failed: {}", ec.message());
        } else if (self->shared_->http_sessions >= Shared::max_http_sessions) {
            boost::system::error_code ignored;
            s.close(ignored);
        } else {
            std::make_shared<HttpSession>(std::move(s), self->shared_)->run();
        }
        self->accept_next();
    });
}

}  // namespace tensile::monitor
