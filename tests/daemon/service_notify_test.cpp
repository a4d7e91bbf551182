// The daemon under systemd's notify protocol (sd_notify, systemd.service(5)
// Type=notify and WatchdogSec): READY=1 once it serves, WATCHDOG=1 at half the
// watchdog interval, STOPPING=1 on SIGTERM. The test plays systemd's side: a
// datagram socket named in NOTIFY_SOCKET and the interval in WATCHDOG_USEC.
#include <catch2/catch.hpp>

#include <chrono>
#include <cstdlib>
#include <fcntl.h>
#include <filesystem>
#include <poll.h>
#include <signal.h>
#include <spawn.h>
#include <string>
#include <sys/socket.h>
#include <sys/un.h>
#include <sys/wait.h>
#include <unistd.h>
#include <vector>

#include "support/process.hpp"

using namespace tensile::testing;
namespace fs = std::filesystem;

extern char** environ;

namespace {

struct Message {
    std::string text;
    std::chrono::steady_clock::time_point at;
};

// Messages arriving on `fd` until `until` returns true or the time runs out.
template <class Until>
void receive(int fd, std::vector<Message>& got, std::chrono::seconds limit, Until until) {
    const auto end = std::chrono::steady_clock::now() + limit;
    while (!until() && std::chrono::steady_clock::now() < end) {
        pollfd p{fd, POLLIN, 0};
        if (::poll(&p, 1, 100) <= 0) continue;
        char buf[512];
        const auto n = ::recv(fd, buf, sizeof buf, 0);
        if (n > 0) got.push_back({std::string(buf, static_cast<std::size_t>(n)), std::chrono::steady_clock::now()});
    }
}

std::size_t count_of(const std::vector<Message>& got, const std::string& what) {
    std::size_t n = 0;
    for (const auto& m : got) n += m.text.find(what) != std::string::npos;
    return n;
}

}  // namespace

TEST_CASE("under systemd the daemon says ready, pings the watchdog and says when it stops") {
    const auto dir = fs::temp_directory_path() / ("tensiled-notify-" + std::to_string(::getpid()));
    fs::remove_all(dir);
    fs::create_directories(dir);
    const auto socket_path = dir / "notify.sock";

    const int fd = ::socket(AF_UNIX, SOCK_DGRAM | SOCK_CLOEXEC, 0);
    REQUIRE(fd >= 0);
    sockaddr_un addr{};
    addr.sun_family = AF_UNIX;
    std::snprintf(addr.sun_path, sizeof addr.sun_path, "%s", socket_path.c_str());
    REQUIRE(::bind(fd, reinterpret_cast<sockaddr*>(&addr), sizeof addr) == 0);

    std::vector<std::string> env_strings{"NOTIFY_SOCKET=" + socket_path.string(), "WATCHDOG_USEC=400000"};
    for (char** e = environ; *e; ++e)
        if (std::string(*e).rfind("NOTIFY_SOCKET=", 0) != 0 && std::string(*e).rfind("WATCHDOG_", 0) != 0)
            env_strings.emplace_back(*e);
    std::vector<char*> envp;
    for (auto& s : env_strings) envp.push_back(s.data());
    envp.push_back(nullptr);

    const std::string self = bin("tensiled");
    std::vector<std::string> args{self, "--demo", "--demo-data", (dir / "data").string(), "--monitor-port", "0"};
    std::vector<char*> argv;
    for (auto& a : args) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 1, "/dev/null", O_WRONLY, 0);
    pid_t pid = -1;
    REQUIRE(posix_spawn(&pid, self.c_str(), &actions, nullptr, argv.data(), envp.data()) == 0);
    posix_spawn_file_actions_destroy(&actions);

    std::vector<Message> got;
    receive(fd, got, std::chrono::seconds(20), [&] { return count_of(got, "READY=1") > 0; });
    REQUIRE(count_of(got, "READY=1") == 1);
    // Half of 0.4 s: about five pings a second; at least three in 1.5 s.
    const std::size_t before = count_of(got, "WATCHDOG=1");
    receive(fd, got, std::chrono::seconds(2), [] { return false; });
    CHECK(count_of(got, "WATCHDOG=1") - before >= 3);

    const auto children = run_command("pgrep -P " + std::to_string(pid)).out;
    REQUIRE(::kill(pid, SIGTERM) == 0);
    receive(fd, got, std::chrono::seconds(10), [&] { return count_of(got, "STOPPING=1") > 0; });
    CHECK(count_of(got, "STOPPING=1") == 1);
    int status = 0;
    ::waitpid(pid, &status, 0);
    CHECK(WIFEXITED(status));
    CHECK(WEXITSTATUS(status) == 0);
    if (!children.empty()) run_command("kill " + children + " 2>/dev/null");
    ::close(fd);
    fs::remove_all(dir);
}
