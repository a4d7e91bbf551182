// Test helpers for the monitor: starts a real tensiled as a child (its stdout
// in a file, the monitor port read from the "monitor http://..." line), a tiny
// synchronous HTTP client, and a WebSocket client. Test-only; the child is
// stopped with SIGTERM by its own pid when the fixture goes away.
#pragma once

#include <boost/asio/connect.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/beast/core.hpp>
#include <boost/beast/http.hpp>
#include <boost/beast/websocket.hpp>
#include <chrono>
#include <csignal>
#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>
#include <sys/wait.h>
#include <thread>
#include <unistd.h>
#include <vector>

namespace tensile::testing {

struct Answer {
    int status = 0;
    std::string body;
    std::string content_type;
    std::string allow;
};

inline Answer http(std::uint16_t port, const std::string& method, const std::string& target,
                   const std::string& body = "", const std::string& authorization = "") {
    namespace beast = boost::beast;
    namespace http = beast::http;
    boost::asio::io_context io;
    beast::tcp_stream stream(io);
    stream.connect(boost::asio::ip::tcp::endpoint(boost::asio::ip::address_v4::loopback(), port));
    http::request<http::string_body> req(http::string_to_verb(method), target, 11);
    req.set(http::field::host, "127.0.0.1");
    if (!authorization.empty()) req.set(http::field::authorization, authorization);
    req.body() = body;
    req.prepare_payload();
    http::write(stream, req);
    beast::flat_buffer buf;
    http::response_parser<http::string_body> parser;
    parser.body_limit(512ull * 1024 * 1024);
    http::read(stream, buf, parser);
    auto res = parser.release();
    return {static_cast<int>(res.result_int()), res.body(), std::string(res[http::field::content_type]),
            std::string(res[http::field::allow])};
}

class Daemon {
public:
    // `args`: tensiled's arguments after the binary.
    Daemon(const std::vector<std::string>& args, const std::filesystem::path& log) : log_(log) {
        pid_ = ::fork();
        if (pid_ == 0) {
            std::freopen(log.c_str(), "w", stdout);
            std::freopen(log.c_str(), "a", stderr);
            std::vector<char*> argv;
            const std::string exe = std::string(TENSILE_BIN_DIR) + "/tensiled";
            argv.push_back(const_cast<char*>(exe.c_str()));
            for (const auto& a : args) argv.push_back(const_cast<char*>(a.c_str()));
            argv.push_back(nullptr);
            ::execv(exe.c_str(), argv.data());
            ::_exit(127);
        }
        const std::regex line("monitor http://127\\.0\\.0\\.1:([0-9]+)/");
        for (int i = 0; i < 200 && port == 0; ++i) {
            std::this_thread::sleep_for(std::chrono::milliseconds(50));
            std::smatch m;
            const auto text = output();
            if (std::regex_search(text, m, line)) port = static_cast<std::uint16_t>(std::stoi(m[1]));
        }
    }
    ~Daemon() { stop(); }
    int stop() {
        if (pid_ <= 0) return status_;
        ::kill(pid_, SIGTERM);
        int st = 0;
        ::waitpid(pid_, &st, 0);
        pid_ = -1;
        status_ = WIFEXITED(st) ? WEXITSTATUS(st) : -1;
        return status_;
    }
    [[nodiscard]] std::string output() const {
        std::ifstream in(log_);
        std::stringstream s;
        s << in.rdbuf();
        return s.str();
    }
    [[nodiscard]] std::string address() const { return "127.0.0.1:" + std::to_string(port); }
    std::uint16_t port = 0;

private:
    std::filesystem::path log_;
    pid_t pid_ = -1;
    int status_ = -1;
};

// Waits until `ready()` or the time is up; returns ready().
template <class F>
bool wait_for(F ready, double seconds) {
    const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
    while (std::chrono::steady_clock::now() < until) {
        if (ready()) return true;
        std::this_thread::sleep_for(std::chrono::milliseconds(100));
    }
    return ready();
}

inline std::filesystem::path temp_dir(const std::string& name) {
    auto d = std::filesystem::temp_directory_path() / (name + "-" + std::to_string(::getpid()));
    std::filesystem::remove_all(d);
    std::filesystem::create_directories(d);
    return d;
}

}  // namespace tensile::testing
