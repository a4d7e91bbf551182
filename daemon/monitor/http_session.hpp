// One HTTP connection: reads requests (header 8 KiB, body 64 KiB, 30 s to
// read each one), hands them to the API, writes the answer, and keeps the
// connection alive while the client asks for it. A request to /api/v1/live
// with a WebSocket upgrade becomes a WsSession.
//
// Error policy: a body that is too large gets 413, an unparseable request
// 400, both as JSON with a message; socket errors and timeouts end the
// connection quietly.
#pragma once

#include <memory>
#include <optional>

#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>

namespace tensile::monitor {

struct Shared;
struct Reply;

class HttpSession : public std::enable_shared_from_this<HttpSession> {
public:
    HttpSession(boost::asio::ip::tcp::socket&& socket, std::shared_ptr<Shared> shared);
    ~HttpSession();
    void run();

private:
    void read_next();
    void on_read(boost::beast::error_code ec);
    void answer(Reply reply);
    void upgrade();
    void close();

    boost::beast::tcp_stream stream_;
    std::shared_ptr<Shared> shared_;
    boost::beast::flat_buffer buffer_;
    std::optional<boost::beast::http::request_parser<boost::beast::http::string_body>> parser_;
    boost::beast::http::request<boost::beast::http::string_body> request_;
    std::shared_ptr<void> response_;  // keeps the response alive while it is written
};

}  // namespace tensile::monitor
