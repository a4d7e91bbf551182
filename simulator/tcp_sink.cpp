// TCP server sink (Boost.Asio, synchronous): one client at a time; when it goes
// away, or a disconnect fault drops it, the next accept takes a reconnect.
// Commands are read from the same connection without blocking (available()
// then read_some of exactly that much). Errors on a connection end that
// connection only; a bad address or a busy port is refused at opening.
#include <optional>
#include <utility>  // Boost 1.74's Asio uses std::exchange without including it under C++20

#include <boost/asio.hpp>

#include "sinks.hpp"

namespace tensile::sim {

namespace {

using boost::asio::ip::tcp;

class TcpSink final : public Sink {
public:
    // Opens, binds and listens; an empty string on success, else what went wrong.
    std::string listen(const tcp::endpoint& ep) {
        boost::system::error_code ec;
        acceptor_.open(ep.protocol(), ec);
        if (!ec) acceptor_.set_option(tcp::acceptor::reuse_address(true), ec);
        if (!ec) acceptor_.bind(ep, ec);
        if (!ec) acceptor_.listen(4, ec);
        return ec ? ec.message() : std::string();
    }
    [[nodiscard]] tcp::endpoint local() const {
        boost::system::error_code ec;
        return acceptor_.local_endpoint(ec);
    }
    boost::asio::io_context& io() { return io_; }

    bool write(std::string_view bytes) override {
        if (!socket_) return false;
        boost::system::error_code ec;
        boost::asio::write(*socket_, boost::asio::buffer(bytes.data(), bytes.size()), ec);
        if (ec) {
            socket_.reset();
            return false;
        }
        return true;
    }

    std::string poll() override {
        if (!socket_) return {};
        boost::system::error_code ec;
        const std::size_t n = socket_->available(ec);
        if (ec || n == 0) return {};
        std::string bytes(n, '\0');
        const std::size_t got = socket_->read_some(boost::asio::buffer(bytes), ec);
        if (ec) {
            socket_.reset();
            return {};
        }
        bytes.resize(got);
        return bytes;
    }

    [[nodiscard]] bool connected() const override { return socket_.has_value(); }

    bool connect(bool wait) override {
        if (socket_) return true;
        boost::system::error_code ec;
        acceptor_.non_blocking(!wait, ec);
        tcp::socket s(acceptor_.get_executor());
        acceptor_.accept(s, ec);
        if (ec) return false;
        s.set_option(tcp::no_delay(true), ec);
        socket_.emplace(std::move(s));
        return true;
    }

    void drop() override {
        if (!socket_) return;
        boost::system::error_code ec;
        socket_->shutdown(tcp::socket::shutdown_both, ec);
        socket_->close(ec);
        socket_.reset();
    }

    void finish() override {
        if (!socket_) return;
        boost::system::error_code ec;
        socket_->shutdown(tcp::socket::shutdown_send, ec);
        // Let the client read to the end before the socket goes.
        char sink[256];
        for (int i = 0; i < 100 && !ec; ++i) socket_->read_some(boost::asio::buffer(sink), ec);
        socket_->close(ec);
        socket_.reset();
    }

private:
    boost::asio::io_context io_;   // declared first: the acceptor and sockets use it
    tcp::acceptor acceptor_{io_};
    std::optional<tcp::socket> socket_;
};

}  // namespace

Result<std::unique_ptr<Sink>> open_tcp_sink(const std::string& host_port, std::ostream& announce, const std::string& option,
                                            const std::string& label) {
    const auto colon = host_port.rfind(':');
    if (colon == std::string::npos || colon == 0 || colon + 1 == host_port.size())
        return Error{option + " '" + host_port + "': expected HOST:PORT, e.g. 127.0.0.1:7700"};
    const std::string host = host_port.substr(0, colon);
    const std::string port = host_port.substr(colon + 1);
    auto sink = std::make_unique<TcpSink>();
    boost::system::error_code ec;
    tcp::resolver resolver(sink->io());
    const auto endpoints = resolver.resolve(host, port, tcp::resolver::passive | tcp::resolver::numeric_service, ec);
    if (ec || endpoints.empty()) return Error{option + " '" + host_port + "': cannot resolve: " + ec.message()};
    if (const std::string why = sink->listen(*endpoints.begin()); !why.empty())
        return Error{option + " '" + host_port + "': cannot listen: " + why};
    const auto bound = sink->local();
    announce << "tcp " << bound.address().to_string() << ":" << bound.port() << (label.empty() ? "" : " ") << label << std::endl;
    return std::unique_ptr<Sink>(std::move(sink));
}

}  // namespace tensile::sim
