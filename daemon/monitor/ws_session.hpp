// One WebSocket client of the live feed (/api/v1/live). Messages from the hub
// go into a small bounded queue and are written one at a time. Timeout and
// drop policy, in one place:
//   - queue limit 64 messages: a client that falls that far behind is dropped
//     at once (socket closed, counted in the hub), never waited for;
//   - one write stuck for more than 10 s drops the client too;
//   - the server's send buffer on this socket is kept small (64 KiB) so a
//     client that stops reading shows up as a full queue within seconds;
//   - incoming messages are read only to notice a close; at most 4 KiB each.
// Acquisition never waits on any of this: delivery only appends to a queue.
//
// Error policy: any socket error ends the session quietly (logged at debug).
#pragma once

#include <deque>
#include <memory>

#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>
#include <boost/beast/websocket.hpp>

#include "live_hub.hpp"

namespace tensile::monitor {

struct Shared;

class WsSession : public LiveClient, public std::enable_shared_from_this<WsSession> {
public:
    static constexpr std::size_t queue_limit = 64;
    static constexpr double write_stall_limit_s = 10.0;

    WsSession(boost::beast::tcp_stream&& stream, std::shared_ptr<Shared> shared);
    // Takes over the upgrade request; sends `hello` first once accepted.
    void run(boost::beast::http::request<boost::beast::http::string_body> request, Message hello);

    bool deliver(const Message& message) override;
    void check_stall(double now_s) override;

private:
    void on_accept(boost::beast::error_code ec);
    void read_next();
    void write_next();
    void drop(const char* why);

    boost::beast::websocket::stream<boost::beast::tcp_stream> ws_;
    std::shared_ptr<Shared> shared_;
    boost::beast::flat_buffer in_;
    std::deque<Message> queue_;
    bool open_ = false, writing_ = false, dropped_ = false;
    double write_started_s_ = 0;
};

}  // namespace tensile::monitor
