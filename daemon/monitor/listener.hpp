// Accepts TCP connections for the monitor and starts an HttpSession for each,
// up to the shared connection limit (beyond it the socket is closed at once,
// so a flood of connections cannot starve the rig of file descriptors).
//
// Error policy: binding is start-up and throws std::runtime_error naming the
// address; accept errors are logged and accepting goes on.
#pragma once

#include <memory>
#include <string>

#include <boost/asio/io_context.hpp>
#include <boost/asio/ip/tcp.hpp>

namespace tensile::monitor {

struct Shared;

class Listener : public std::enable_shared_from_this<Listener> {
public:
    Listener(boost::asio::io_context& io, const std::string& address, std::uint16_t port, std::shared_ptr<Shared> shared);
    void run() { accept_next(); }
    void stop();
    [[nodiscard]] std::uint16_t port() const { return port_; }

private:
    void accept_next();

    boost::asio::io_context& io_;
    boost::asio::ip::tcp::acceptor acceptor_;
    std::shared_ptr<Shared> shared_;
    std::uint16_t port_ = 0;
};

}  // namespace tensile::monitor
