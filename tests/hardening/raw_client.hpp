// A raw TCP client for the security tests: sends exactly the bytes given
// (half-written requests, oversized headers, bodies dribbled byte by byte)
// and reads with a deadline, so a test can tell "answered", "cut" and
// "still open". Plain POSIX sockets, blocking with poll(); test-only.
// Error policy: a failed connect throws std::runtime_error naming the port;
// send and receive report what happened as values.
#pragma once

#include <arpa/inet.h>
#include <cerrno>
#include <chrono>
#include <netinet/in.h>
#include <poll.h>
#include <stdexcept>
#include <string>
#include <sys/socket.h>
#include <unistd.h>

namespace tensile::testing {

class RawClient {
public:
    explicit RawClient(std::uint16_t port) {
        fd_ = ::socket(AF_INET, SOCK_STREAM | SOCK_CLOEXEC, 0);
        sockaddr_in a{};
        a.sin_family = AF_INET;
        a.sin_port = htons(port);
        a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
        if (fd_ < 0 || ::connect(fd_, reinterpret_cast<sockaddr*>(&a), sizeof a) != 0)
            throw std::runtime_error("cannot connect to 127.0.0.1:" + std::to_string(port));
    }
    RawClient(const RawClient&) = delete;
    RawClient& operator=(const RawClient&) = delete;
    ~RawClient() {
        if (fd_ >= 0) ::close(fd_);
    }

    // False once the peer has closed or reset the connection.
    bool send(const std::string& bytes) {
        std::size_t done = 0;
        while (done < bytes.size()) {
            const auto n = ::send(fd_, bytes.data() + done, bytes.size() - done, MSG_NOSIGNAL);
            if (n <= 0) return false;
            done += static_cast<std::size_t>(n);
        }
        return true;
    }

    enum class State { open, closed };
    // Reads whatever arrives within `seconds` (appending to `received`);
    // `closed` once the peer ended the connection (EOF or reset).
    State read_for(double seconds) {
        const auto until = std::chrono::steady_clock::now() + std::chrono::duration<double>(seconds);
        for (;;) {
            const auto left = std::chrono::duration_cast<std::chrono::milliseconds>(until - std::chrono::steady_clock::now());
            if (left.count() <= 0) return State::open;
            pollfd p{fd_, POLLIN, 0};
            const int r = ::poll(&p, 1, static_cast<int>(left.count()));
            if (r < 0 && errno == EINTR) continue;
            if (r <= 0) return State::open;
            char buf[4096];
            const auto n = ::recv(fd_, buf, sizeof buf, 0);
            if (n <= 0) return State::closed;
            received.append(buf, static_cast<std::size_t>(n));
        }
    }

    // The status code of the first response received, 0 if none.
    [[nodiscard]] int status() const {
        if (received.rfind("HTTP/1.1 ", 0) != 0 || received.size() < 12) return 0;
        return std::stoi(received.substr(9, 3));
    }

    std::string received;

private:
    int fd_ = -1;
};

}  // namespace tensile::testing
