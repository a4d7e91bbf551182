// One live client; see ws_session.hpp for the drop policy.
#include "ws_session.hpp"

#include "shared_state.hpp"

namespace tensile::monitor {

namespace beast = boost::beast;
namespace websocket = beast::websocket;

WsSession::WsSession(beast::tcp_stream&& stream, std::shared_ptr<Shared> shared)
    : ws_(std::move(stream)), shared_(std::move(shared)) {}

void WsSession::run(beast::http::request<beast::http::string_body> request, Message hello) {
    beast::error_code ec;
    // A small send buffer makes a client that stopped reading visible quickly.
    beast::get_lowest_layer(ws_).socket().set_option(boost::asio::socket_base::send_buffer_size(64 * 1024), ec);
    beast::get_lowest_layer(ws_).expires_never();  // the websocket keeps its own timers
    auto timeouts = websocket::stream_base::timeout::suggested(beast::role_type::server);
    ws_.set_option(timeouts);
    ws_.read_message_max(4096);
    ws_.set_option(websocket::stream_base::decorator(
        [](websocket::response_type& res) { res.set(beast::http::field::server, "tensiled"); }));
    queue_.push_back(std::move(hello));
    ws_.async_accept(request, [self = shared_from_this()](beast::error_code e) { self->on_accept(e); });
}

void WsSession::on_accept(beast::error_code ec) {
    if (ec) return drop(nullptr);
    if (!shared_->hub.join(shared_from_this())) {
        ws_.async_close(websocket::close_reason(websocket::close_code::try_again_later, "too many live clients"),
                        [self = shared_from_this()](beast::error_code) {});
        return;
    }
    open_ = true;
    read_next();
    write_next();
}

void WsSession::read_next() {
    ws_.async_read(in_, [self = shared_from_this()](beast::error_code ec, std::size_t) {
        if (ec) return self->drop(nullptr);
        self->in_.consume(self->in_.size());  // clients have nothing to say yet
        self->read_next();
    });
}

bool WsSession::deliver(const Message& message) {
    if (dropped_) return false;
    if (queue_.size() >= queue_limit) {
        drop("queue full");
        return false;
    }
    queue_.push_back(message);
    if (open_ && !writing_) write_next();
    return true;
}

void WsSession::write_next() {
    if (queue_.empty() || writing_ || dropped_) return;
    writing_ = true;
    write_started_s_ = steady_now_s();
    ws_.text(true);
    ws_.async_write(boost::asio::buffer(*queue_.front()),
                    [self = shared_from_this()](beast::error_code ec, std::size_t) {
                        self->writing_ = false;
                        if (ec) return self->drop(nullptr);
                        self->queue_.pop_front();
                        self->write_next();
                    });
}

void WsSession::check_stall(double now_s) {
    if (writing_ && now_s - write_started_s_ > write_stall_limit_s) drop("write stalled");
}

void WsSession::drop(const char* why) {
    if (dropped_) return;
    dropped_ = true;
    if (why) {
        shared_->hub.count_drop();
        shared_->log->warn("monitor: live client dropped ({})", why);
    }
    // The queue stays: a pending write still points into its front message.
    beast::error_code ec;
    // Closing the socket cancels the pending write; nothing waits for the client.
    beast::get_lowest_layer(ws_).socket().shutdown(boost::asio::ip::tcp::socket::shutdown_both, ec);
    beast::get_lowest_layer(ws_).socket().close(ec);
}

}  // namespace tensile::monitor
