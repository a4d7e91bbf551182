// The HTTP client of tensilectl; see daemon_client.hpp.
#include "daemon_client.hpp"

#include <boost/asio/connect.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>
#include <cstdlib>
#include <fstream>
#include <iostream>
#include <nlohmann/json.hpp>

namespace tensile::ctl {

namespace beast = boost::beast;
namespace http = beast::http;

namespace {
std::string address_of(const DaemonTarget& t) {
    if (!t.address.empty()) return t.address;
    if (const char* e = std::getenv("TENSILED_ADDRESS"); e && *e) return e;
    return "127.0.0.1:8470";
}
}  // namespace

std::string DaemonTarget::host() const {
    const auto a = address_of(*this);
    const auto colon = a.rfind(':');
    return colon == std::string::npos ? a : a.substr(0, colon);
}

std::string DaemonTarget::port() const {
    const auto a = address_of(*this);
    const auto colon = a.rfind(':');
    return colon == std::string::npos ? "8470" : a.substr(colon + 1);
}

std::string DaemonTarget::token() const {
    if (!token_file.empty()) {
        std::ifstream in(token_file);
        std::string t;
        std::getline(in, t);
        while (!t.empty() && std::isspace(static_cast<unsigned char>(t.back()))) t.pop_back();
        return t;
    }
    if (const char* e = std::getenv("TENSILED_TOKEN"); e) return e;
    return {};
}

void add_target_options(CLI::App& cmd, DaemonTarget& target) {
    cmd.add_option("--address", target.address, "Daemon address host:port (default $TENSILED_ADDRESS or 127.0.0.1:8470)");
    cmd.add_option("--token-file", target.token_file, "File holding the daemon's token (default: $TENSILED_TOKEN)")
        ->check(CLI::ExistingFile);
}

HttpAnswer http_call(const DaemonTarget& target, const std::string& method, const std::string& path,
                     const std::string& body, bool with_token) {
    HttpAnswer out;
    try {
        boost::asio::io_context io;
        boost::asio::ip::tcp::resolver resolver(io);
        beast::tcp_stream stream(io);
        stream.expires_after(std::chrono::seconds(10));
        stream.connect(resolver.resolve(target.host(), target.port()));
        http::request<http::string_body> req(http::string_to_verb(method), path, 11);
        req.set(http::field::host, target.host());
        req.set(http::field::user_agent, "tensilectl");
        if (with_token || !target.token().empty()) {
            const auto token = target.token();
            if (!token.empty()) req.set(http::field::authorization, "Bearer " + token);
        }
        if (!body.empty()) req.set(http::field::content_type, "application/json");
        req.body() = body;
        req.prepare_payload();
        http::write(stream, req);
        beast::flat_buffer buffer;
        http::response_parser<http::string_body> parser;
        parser.body_limit(1024ull * 1024 * 1024);  // exports of long runs are large
        stream.expires_after(std::chrono::seconds(120));
        http::read(stream, buffer, parser);
        auto res = parser.release();
        out.reachable = true;
        out.status = static_cast<int>(res.result_int());
        out.content_type = std::string(res[http::field::content_type]);
        out.body = std::move(res.body());
        beast::error_code ec;
        stream.socket().shutdown(boost::asio::ip::tcp::socket::shutdown_both, ec);
    } catch (const std::exception& e) {
        out.error = e.what();
    }
    return out;
}

int report_failure(const DaemonTarget& target, const HttpAnswer& a) {
    if (!a.reachable) {
        std::cerr << "tensilectl: tensiled is not running at " << target.host() << ':' << target.port() << " ("
                  << a.error << "); start it, or give --address / TENSILED_ADDRESS\n";
        return exit_unreachable;
    }
    if (a.status >= 200 && a.status < 300) return 0;
    std::string message = a.body;
    auto j = nlohmann::json::parse(a.body, nullptr, false);
    if (j.is_object() && j.contains("error") && j["error"].is_string()) message = j["error"].get<std::string>();
    std::cerr << "tensilectl: the daemon refused (" << a.status << "): " << message << '\n';
    if (a.status == 401) std::cerr << "  give the token with --token-file FILE or TENSILED_TOKEN\n";
    return exit_refused;
}

}  // namespace tensile::ctl
