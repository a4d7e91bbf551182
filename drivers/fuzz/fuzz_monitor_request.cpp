// Fuzz target for the monitor's HTTP request handling without sockets: the
// bytes of one request go through Beast's request parser with the limits
// http_session.cpp sets (8 KiB header, 64 KiB body), then the target through
// split_target (path and %-decoded query), the run id and the query parsers
// of /runs and /runs/{id}/frames, and the Authorization header through the
// access check. Every input must end in a parsed request or a Beast error;
// an exception escaping, a crash or a sanitizer report is a bug.
#include <cstdint>
#include <string>

#include <boost/beast/core/flat_buffer.hpp>
#include <boost/beast/http.hpp>

#include "daemon/monitor/access.hpp"
#include "daemon/monitor/api_runs.hpp"
#include "daemon/monitor/reply.hpp"

namespace http = boost::beast::http;
using namespace tensile::monitor;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
    http::request_parser<http::string_body> parser;
    parser.header_limit(8 * 1024);
    parser.body_limit(64 * 1024);
    parser.eager(true);
    // As async_read does: feed what is left until done, an error, or the
    // parser wants more than there is; then the end of the stream.
    boost::beast::error_code ec;
    std::size_t used = 0;
    while (!parser.is_done() && used < size) {
        const auto n = parser.put(boost::asio::buffer(data + used, size - used), ec);
        used += n;
        if (ec == http::error::need_more) ec = {};
        if (ec || n == 0) break;
    }
    // Beast asserts that an end of stream follows some bytes; its own read
    // loop only calls put_eof then (an empty input found this in the harness).
    if (!ec && !parser.is_done() && parser.got_some()) parser.put_eof(ec);
    if (ec || !parser.is_header_done()) return 0;

    const auto& req = parser.get();
    ApiRequest r;
    r.method = std::string(req.method_string());
    split_target(std::string(req.target()), r.path, r.query);
    r.authorization = std::string(req[http::field::authorization]);
    if (parser.is_done()) r.body = req.body();

    (void)parse_run_filter(r.query);
    (void)parse_frames_query(r.query);
    std::size_t at = 0;
    while (at <= r.path.size()) {  // every path segment as a run id
        auto end = r.path.find('/', at);
        if (end == std::string::npos) end = r.path.size();
        (void)parse_run_id(r.path.substr(at, end - at));
        at = end + 1;
    }
    static const Access a = Access::with_token(true, "fuzz-token-0123456789abcdef");
    (void)a.check(r.authorization, true);
    (void)a.check(r.authorization, false);
    if (auto token = r.query.find("token"); token != r.query.end()) (void)a.check_token(token->second, false);
    if (!r.body.empty()) (void)parse_command_body(r.body);
    return 0;
}
