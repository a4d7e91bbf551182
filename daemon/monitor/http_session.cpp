// One HTTP connection; see http_session.hpp.
#include "http_session.hpp"

#include "api.hpp"
#include "shared_state.hpp"
#include "ws_session.hpp"

namespace tensile::monitor {

namespace beast = boost::beast;
namespace http = beast::http;

HttpSession::HttpSession(boost::asio::ip::tcp::socket&& socket, std::shared_ptr<Shared> shared)
    : stream_(std::move(socket)), shared_(std::move(shared)) {
    ++shared_->http_sessions;
}

HttpSession::~HttpSession() { --shared_->http_sessions; }

void HttpSession::run() { read_next(); }

void HttpSession::read_next() {
    parser_.emplace();
    parser_->header_limit(8 * 1024);
    parser_->body_limit(Shared::body_limit);
    stream_.expires_after(Shared::read_timeout);
    http::async_read(stream_, buffer_, *parser_, [self = shared_from_this()](beast::error_code ec, std::size_t) {
        self->on_read(ec);
    });
}

void HttpSession::on_read(beast::error_code ec) {
    if (ec == http::error::end_of_stream || ec == beast::error::timeout || ec == boost::asio::error::operation_aborted)
        return close();
    if (ec == http::error::body_limit) {
        request_ = {};
        request_.keep_alive(false);
        return answer(error_reply(413, "request body larger than " + std::to_string(Shared::body_limit) + " bytes"));
    }
    if (ec) {
        if (ec == boost::asio::error::connection_reset || ec == boost::asio::error::eof) return close();
        request_ = {};
        request_.keep_alive(false);
        return answer(error_reply(400, "malformed HTTP request: " + ec.message()));
    }
    request_ = parser_->release();
    if (shared_->stopped) return close();
    const std::string target(request_.target());
    if (beast::websocket::is_upgrade(request_) && target.rfind("/api/v1/live", 0) == 0) return upgrade();

    ApiRequest r;
    r.method = std::string(request_.method_string());
    split_target(target, r.path, r.query);
    r.authorization = std::string(request_[http::field::authorization]);
    r.body = std::move(request_.body());
    auto api = shared_->api;
    api->handle(std::move(r), [self = shared_from_this()](Reply reply) { self->answer(std::move(reply)); });
}

void HttpSession::answer(Reply reply) {
    auto res = std::make_shared<http::response<http::string_body>>(static_cast<http::status>(reply.status),
                                                                   request_.version() ? request_.version() : 11);
    res->set(http::field::server, "tensiled");
    res->set(http::field::content_type, reply.content_type);
    res->set(http::field::cache_control, "no-store");
    for (const auto& [k, v] : reply.headers) res->set(k, v);
    res->keep_alive(request_.keep_alive());
    res->body() = std::move(reply.body);
    res->prepare_payload();
    response_ = res;
    stream_.expires_after(Shared::read_timeout);  // the same limit for writing the answer
    http::async_write(stream_, *res, [self = shared_from_this(), res](beast::error_code ec, std::size_t) {
        self->response_.reset();
        if (ec || !res->keep_alive()) return self->close();
        self->read_next();
    });
}

void HttpSession::upgrade() {
    ApiRequest r;
    split_target(std::string(request_.target()), r.path, r.query);
    if (r.path != "/api/v1/live") return answer(error_reply(404, "no such path: " + r.path));
    const std::string header(request_[http::field::authorization]);
    auto refusal = header.empty() ? shared_->access.check_token(r.query["token"], false)
                                  : shared_->access.check(header, false);
    if (refusal) return answer(error_reply(refusal->status, refusal->message));
    auto session = std::make_shared<WsSession>(std::move(stream_), shared_);
    session->run(std::move(request_), shared_->hello ? shared_->hello() : make_message("{}"));
}

void HttpSession::close() {
    beast::error_code ec;
    stream_.socket().shutdown(boost::asio::ip::tcp::socket::shutdown_send, ec);
}

}  // namespace tensile::monitor
