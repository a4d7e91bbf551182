// Test helper: the real tensile-sim started through the shell, its announced
// links read from stdout, and a thread that notices when it has exited (the
// shell prints "exit CODE" last). Also runs an io_context until the simulator
// is done. Test-only; failures surface as Catch REQUIREs in the caller.
#pragma once

#include <atomic>
#include <chrono>
#include <cstdio>
#include <functional>
#include <string>
#include <thread>
#include <vector>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>

#include "support/process.hpp"

namespace tensile::testing {

class LiveSim {
public:
    // `args` after the binary; `announced`: how many link lines to read from stdout first.
    LiveSim(const std::string& args, int announced) {
        pipe_ = popen((bin("tensile-sim") + " " + args + "; echo exit $?").c_str(), "r");
        char line[512];
        for (int i = 0; pipe_ && i < announced && std::fgets(line, sizeof line, pipe_); ++i) {
            std::string l(line);
            if (!l.empty() && l.back() == '\n') l.pop_back();
            lines_.push_back(l);
        }
        if (pipe_)
            waiter_ = std::thread([this] {
                char rest[512];
                while (std::fgets(rest, sizeof rest, pipe_)) exit_line_ = rest;
                done_ = true;
            });
    }
    ~LiveSim() {
        if (waiter_.joinable()) waiter_.join();
        if (pipe_) pclose(pipe_);
    }

    [[nodiscard]] const std::vector<std::string>& announced() const { return lines_; }
    // The word after "tcp"/"pty" on the line ending in `label` ("" for an unlabelled line).
    [[nodiscard]] std::string target(const std::string& label) const {
        for (const auto& l : lines_) {
            const auto a = l.find(' ');
            const auto b = l.find(' ', a + 1);
            const std::string rest = b == std::string::npos ? "" : l.substr(b + 1);
            if (rest == label) return l.substr(a + 1, b == std::string::npos ? std::string::npos : b - a - 1);
        }
        return {};
    }
    static int port_of(const std::string& host_port) { return std::stoi(host_port.substr(host_port.rfind(':') + 1)); }

    // Runs `io` until the simulator has exited (or `limit` passed), then calls `stop`.
    void run_until_done(boost::asio::io_context& io, const std::function<void()>& stop, std::chrono::seconds limit) {
        boost::asio::steady_timer watch(io);
        const auto give_up = std::chrono::steady_clock::now() + limit;
        std::function<void()> check = [&] {
            watch.expires_after(std::chrono::milliseconds(50));
            watch.async_wait([&](boost::system::error_code) {
                if (done_ || std::chrono::steady_clock::now() > give_up) return stop();
                check();
            });
        };
        check();
        io.run();
        if (waiter_.joinable()) waiter_.join();
    }
    [[nodiscard]] bool exited_cleanly() const { return done_ && exit_line_ == "exit 0\n"; }

private:
    FILE* pipe_ = nullptr;
    std::vector<std::string> lines_;
    std::thread waiter_;
    std::atomic<bool> done_{false};
    std::string exit_line_;
};

}  // namespace tensile::testing
