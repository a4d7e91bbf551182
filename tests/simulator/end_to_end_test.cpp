// End to end: runs the real tensile-sim binary (from TENSILE_BIN_DIR) to a
// file, over TCP and over a pseudo-terminal, and checks what comes out against
// the truth it writes and the wire contract of drivers/wire-formats.md.
#include <catch2/catch.hpp>

#include <arpa/inet.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <poll.h>
#include <signal.h>
#include <spawn.h>
#include <sys/socket.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <climits>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <thread>

#include <nlohmann/json.hpp>

#include "crc16.hpp"

namespace fs = std::filesystem;

namespace {

const std::string sim = std::string(TENSILE_BIN_DIR) + "/tensile-sim";

fs::path scratch() {
    const fs::path p = fs::temp_directory_path() / ("tensile-sim-test-" + std::to_string(::getpid()));
    fs::create_directories(p);
    return p;
}

int run(const std::string& args, const fs::path& err = {}) {
    const std::string cmd = sim + " " + args + (err.empty() ? " 2>/dev/null" : " 2>" + err.string());
    const int status = std::system(cmd.c_str());
    return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

std::string slurp(const fs::path& p) {
    std::ifstream in(p, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

// Starts tensile-sim in the background with stdout to `out`; returns its pid.
pid_t spawn(const std::vector<std::string>& args, const fs::path& out) {
    std::vector<char*> argv;
    std::vector<std::string> all{sim};
    all.insert(all.end(), args.begin(), args.end());
    for (auto& a : all) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t fa;
    posix_spawn_file_actions_init(&fa);
    posix_spawn_file_actions_addopen(&fa, 1, out.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
    pid_t pid = 0;
    REQUIRE(posix_spawn(&pid, sim.c_str(), &fa, nullptr, argv.data(), environ) == 0);
    posix_spawn_file_actions_destroy(&fa);
    return pid;
}

std::string first_line_of(const fs::path& p) {
    for (int i = 0; i < 500; ++i) {
        const std::string s = slurp(p);
        if (const auto nl = s.find('\n'); nl != std::string::npos) return s.substr(0, nl);
        std::this_thread::sleep_for(std::chrono::milliseconds(10));
    }
    return {};
}

// Reads from fd until `want` has been seen (or EOF / 10 s), returns all bytes read.
std::string read_until(int fd, const std::string& want, std::string& seen) {
    const auto until = std::chrono::steady_clock::now() + std::chrono::seconds(10);
    while (seen.find(want) == std::string::npos && std::chrono::steady_clock::now() < until) {
        pollfd p{fd, POLLIN, 0};
        if (::poll(&p, 1, 100) <= 0) continue;
        char buf[4096];
        const ssize_t n = ::read(fd, buf, sizeof buf);
        if (n <= 0) break;
        seen.append(buf, static_cast<std::size_t>(n));
    }
    return seen;
}

int wait_exit(pid_t pid) {
    for (int i = 0; i < 1000; ++i) {
        int status = 0;
        if (::waitpid(pid, &status, WNOHANG) == pid) return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
        std::this_thread::sleep_for(std::chrono::milliseconds(10));
    }
    ::kill(pid, SIGTERM);
    ::waitpid(pid, nullptr, 0);
    return -1;
}

}  // namespace

TEST_CASE("table file: header, frames and maximum force agree with the truth") {
    const fs::path dir = scratch();
    REQUIRE(run("--material harbourline-dc04-lot5 --format table --seed 7 --out " + (dir / "dc04.csv").string() +
                " --truth " + (dir / "dc04.json").string()) == 0);
    const auto truth = nlohmann::json::parse(slurp(dir / "dc04.json"));
    std::ifstream in(dir / "dc04.csv");
    std::string line;
    std::getline(in, line);
    CHECK(line == "time_s,force_N,extension_mm,crosshead_mm");  // wire-formats.md, table
    double fmax = 0, last_t = -1;
    std::size_t rows = 0;
    while (std::getline(in, line)) {
        double t, f;
        REQUIRE(std::sscanf(line.c_str(), "%lf,%lf", &t, &f) == 2);
        REQUIRE(t > last_t);
        last_t = t;
        fmax = std::max(fmax, f);
        ++rows;
    }
    CHECK(rows == truth["run"]["samples"].get<std::size_t>());
    // Considere-Hollomon (REFERENCES.md): Fm = S0 · K·n^n·e^-n = 20 mm² · 296.70 MPa.
    CHECK(truth["Fm_N"].get<double>() == Approx(20 * 296.70).epsilon(2e-5));
    // Measured maximum within 0.3 % of the truth: noise of a class 1 load cell only.
    CHECK(fmax == Approx(truth["Fm_N"].get<double>()).epsilon(0.003));
    CHECK_FALSE(truth.contains("ReH_MPa"));  // continuous yield: no upper yield
    CHECK(truth["times"]["fracture_s"].get<double>() > truth["times"]["max_force_s"].get<double>());
    CHECK(truth["times"]["max_force_s"].get<double>() > truth["times"]["proof_strength_s"].get<double>());
    fs::remove_all(dir);
}

TEST_CASE("same seed, same bytes, and another seed, other bytes") {
    const fs::path dir = scratch();
    for (const char* format : {"lines", "binary"}) {
        const std::string common = std::string(" --format ") + format + " --fault garbage@5+2:300 --fault torn@9+1 --out ";
        REQUIRE(run("--seed 5" + common + (dir / "a").string()) == 0);
        REQUIRE(run("--seed 5" + common + (dir / "b").string()) == 0);
        REQUIRE(run("--seed 6" + common + (dir / "c").string()) == 0);
        const std::string a = slurp(dir / "a");
        CHECK(a.size() > 100000);
        CHECK(a == slurp(dir / "b"));
        CHECK(a != slurp(dir / "c"));
    }
    fs::remove_all(dir);
}

TEST_CASE("binary file: every frame in sync, CRC-checked, in sequence") {
    const fs::path dir = scratch();
    REQUIRE(run("--material harbourline-6061t6-lot12 --format binary --rate 2000 --out " + (dir / "al.bin").string() +
                " --truth " + (dir / "al.json").string()) == 0);
    const std::string b = slurp(dir / "al.bin");
    const auto* p = reinterpret_cast<const unsigned char*>(b.data());
    REQUIRE(b.size() % 24 == 0);
    std::size_t frames = 0;
    for (std::size_t at = 0; at + 24 <= b.size(); at += 24, ++frames) {
        REQUIRE(p[at] == 0xA5);
        REQUIRE(p[at + 1] == 0x5A);
        // CRC-16/CCITT-FALSE over L..last count, big-endian (wire-formats.md).
        const std::uint16_t crc = tensile::sim::crc16_ccitt_false(p + at + 2, 20);
        REQUIRE(p[at + 22] == (crc >> 8));
        REQUIRE(p[at + 23] == (crc & 0xFF));
        REQUIRE(static_cast<std::size_t>(p[at + 3] | p[at + 4] << 8) == (frames & 0xFFFF));
    }
    const auto truth = nlohmann::json::parse(slurp(dir / "al.json"));
    CHECK(frames == truth["run"]["samples"].get<std::size_t>());
    fs::remove_all(dir);
}

TEST_CASE("faults land in the stream and in the truth") {
    const fs::path dir = scratch();
    REQUIRE(run("--format lines --fault nan@3+0.5 --fault disconnect@4+1 --fault garbage@6+1:2000 --fault clock-jump@8:2 --out " +
                (dir / "f.txt").string() + " --truth " + (dir / "f.json").string()) == 0);
    const std::string text = slurp(dir / "f.txt");
    CHECK(text.find(",nan,") != std::string::npos);
    CHECK(text.find("\n4000000,") == std::string::npos);  // lost to the disconnect
    CHECK(text.find("\n5000") != std::string::npos);      // back after it
    const auto truth = nlohmann::json::parse(slurp(dir / "f.json"));
    REQUIRE(truth["faults"].size() == 4);
    CHECK(truth["faults"][0]["kind"] == "nan");
    CHECK(truth["faults"][0]["records"].get<int>() == 500);
    CHECK(truth["faults"][1]["kind"] == "disconnect");
    CHECK(truth["faults"][1]["records"].get<int>() == 1000);
    CHECK(truth["faults"][2]["bytes"].get<int>() == 2000);
    CHECK(truth["faults"][3]["jump_s"].get<double>() == 2.0);
    fs::remove_all(dir);
}

TEST_CASE("bad input: one message naming what was wrong, exit code 2") {
    const fs::path dir = scratch();
    const fs::path err = dir / "err.txt";
    CHECK(run("--format xml", err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("--format 'xml'") && Catch::Contains("expected lines, keyvalue, binary or table"));
    CHECK(run("--material no-such-lot", err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("harbourline-s355-lot7"));
    CHECK(run("--rate 0", err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("--rate"));
    CHECK(run("--fault smoke@1", err) == 2);
    CHECK(run("--at 10:jump", err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("unknown command 'jump'"));
    std::ofstream(dir / "typo.toml") << "name = \"t\"\n[elastic]\nE_MPA = 1\n[hardening]\nlaw = \"voce\"\n[fracture]\n[specimen]\n";
    CHECK(run("--material " + (dir / "typo.toml").string(), err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("unknown key 'E_MPA' in [elastic]"));
    fs::remove_all(dir);
}

TEST_CASE("list of materials: one line per preset, starting with its name") {
    const fs::path dir = scratch();
    REQUIRE(run("--list-materials > " + (dir / "list.txt").string()) == 0);
    std::istringstream in(slurp(dir / "list.txt"));
    std::string line;
    int n = 0;
    while (std::getline(in, line)) {
        ++n;
        CHECK_THAT(line, Catch::StartsWith("harbourline-"));
    }
    CHECK(n == 5);
    fs::remove_all(dir);
}

TEST_CASE("TCP: commands answered on the stream, a reconnect accepted") {
    const fs::path dir = scratch();
    const pid_t pid = spawn({"--tcp", "127.0.0.1:0", "--realtime", "--speed", "20", "--material", "harbourline-dc04-lot5",
                             "--fault", "disconnect@5+0.5", "--truth", (dir / "tcp.json").string()},
                            dir / "announce.txt");
    const std::string announce = first_line_of(dir / "announce.txt");
    REQUIRE_THAT(announce, Catch::StartsWith("tcp 127.0.0.1:"));
    const int port = std::stoi(announce.substr(announce.rfind(':') + 1));
    auto dial = [&] {
        const int fd = ::socket(AF_INET, SOCK_STREAM, 0);
        sockaddr_in a{};
        a.sin_family = AF_INET;
        a.sin_port = htons(static_cast<std::uint16_t>(port));
        a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
        REQUIRE(::connect(fd, reinterpret_cast<sockaddr*>(&a), sizeof a) == 0);
        return fd;
    };
    int fd = dial();
    std::string seen;
    read_until(fd, "\n", seen);
    CHECK_THAT(seen, Catch::Matches("^[0-9]+,[-0-9.]+ N,[-0-9.]+ mm,[-0-9.]+ mm\n[\\s\\S]*"));
    const std::string ask = "ping\nbogus\n";
    REQUIRE(::write(fd, ask.data(), ask.size()) == static_cast<ssize_t>(ask.size()));
    read_until(fd, "#error", seen);
    CHECK(seen.find("#ok ping\n") != std::string::npos);
    CHECK(seen.find("#error unknown command 'bogus'") != std::string::npos);
    // The disconnect fault at 5 s (0.25 s of wall time at speed 20) closes us; dial again.
    std::string rest;
    read_until(fd, "never", rest);
    ::close(fd);
    fd = dial();
    std::string again;
    read_until(fd, "\n", again);
    CHECK_FALSE(again.empty());
    const std::string stop = "stop\n";
    REQUIRE(::write(fd, stop.data(), stop.size()) == 5);
    read_until(fd, "#ok stop\n", again);
    CHECK(again.find("#ok stop\n") != std::string::npos);
    std::string tail;
    read_until(fd, "never", tail);  // the run ends shortly after stop: EOF
    ::close(fd);
    CHECK(wait_exit(pid) == 0);
    const auto truth = nlohmann::json::parse(slurp(dir / "tcp.json"));
    CHECK(truth["commands"].size() == 3);
    CHECK(truth["faults"][0]["kind"] == "disconnect");
    fs::remove_all(dir);
}

TEST_CASE("pty: the path comes first on stdout, data and answers flow") {
    const fs::path dir = scratch();
    const pid_t pid = spawn({"--pty", "--realtime", "--speed", "20", "--material", "harbourline-6061t6-lot12", "--format", "keyvalue"},
                            dir / "announce.txt");
    const std::string announce = first_line_of(dir / "announce.txt");
    REQUIRE_THAT(announce, Catch::StartsWith("pty /dev/"));
    const int fd = ::open(announce.substr(4).c_str(), O_RDWR | O_NOCTTY);
    REQUIRE(fd >= 0);
    std::string seen;
    read_until(fd, "\n", seen);
    CHECK_THAT(seen, Catch::Contains("t=") && Catch::Contains(" F="));
    const std::string ask = "ping\nstop\n";
    REQUIRE(::write(fd, ask.data(), ask.size()) == static_cast<ssize_t>(ask.size()));
    read_until(fd, "#ok stop\n", seen);
    CHECK(seen.find("#ok ping\n") != std::string::npos);
    CHECK(seen.find("#ok stop\n") != std::string::npos);
    std::string tail;
    const auto until = std::chrono::steady_clock::now() + std::chrono::seconds(10);
    int status = 0;
    while (::waitpid(pid, &status, WNOHANG) == 0 && std::chrono::steady_clock::now() < until) read_until(fd, "never-appears", tail);
    ::close(fd);
    if (!WIFEXITED(status)) CHECK(wait_exit(pid) == 0);
    else CHECK(WEXITSTATUS(status) == 0);
    fs::remove_all(dir);
}

// wire-formats.md: a binary stream carries no text, so its commands go to a
// control port beside it and are answered there. Every command of the
// contract is acknowledged, a bad one refused, and the truth says where each came from.
TEST_CASE("binary stream: commands on the control port are answered there") {
    const fs::path dir = scratch();
    const pid_t pid = spawn({"--tcp", "127.0.0.1:0", "--control", "tcp:127.0.0.1:0", "--format", "binary", "--realtime", "--speed",
                             "20", "--material", "harbourline-dc04-lot5", "--truth", (dir / "ctl.json").string()},
                            dir / "announce.txt");
    std::string announced;
    for (int i = 0; i < 500 && std::count(announced.begin(), announced.end(), '\n') < 2; ++i) {
        std::this_thread::sleep_for(std::chrono::milliseconds(10));
        announced = slurp(dir / "announce.txt");
    }
    std::istringstream lines(announced);
    std::string data_line, control_line;
    std::getline(lines, data_line);
    std::getline(lines, control_line);
    REQUIRE_THAT(data_line, Catch::Matches("tcp 127\\.0\\.0\\.1:[0-9]+"));
    REQUIRE_THAT(control_line, Catch::Matches("tcp 127\\.0\\.0\\.1:[0-9]+ control"));
    auto dial = [](const std::string& line) {
        const auto colon = line.find(':');
        const int port = std::stoi(line.substr(colon + 1, line.find(' ', colon) - colon - 1));
        const int fd = ::socket(AF_INET, SOCK_STREAM, 0);
        sockaddr_in a{};
        a.sin_family = AF_INET;
        a.sin_port = htons(static_cast<std::uint16_t>(port));
        a.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
        REQUIRE(::connect(fd, reinterpret_cast<sockaddr*>(&a), sizeof a) == 0);
        return fd;
    };
    const int data = dial(data_line);
    std::string stream;
    read_until(data, "\xA5\x5A", stream);  // the test runs once the stream's reader is there
    const int control = dial(control_line);
    std::string answers;
    for (const std::string command : {"hold", "resume", "extensometer-off", "bogus", "ping"}) {
        const std::string ask = command + "\n";
        REQUIRE(::write(control, ask.data(), ask.size()) == static_cast<ssize_t>(ask.size()));
        read_until(control, command == "bogus" ? "#error" : "#ok " + command + "\n", answers);
    }
    const std::string stop = "stop\n";
    REQUIRE(::write(control, stop.data(), stop.size()) == 5);
    read_until(control, "#ok stop\n", answers);
    CHECK(answers ==
          "#ok hold\n#ok resume\n#ok extensometer-off\n"
          "#error unknown command 'bogus'; expected hold, resume, stop, extensometer-off or ping\n#ok ping\n#ok stop\n");
    std::string tail;
    read_until(data, "never", tail);  // the run ends shortly after stop: EOF
    ::close(data);
    ::close(control);
    CHECK(wait_exit(pid) == 0);
    stream += tail;
    CHECK(stream.find("#ok") == std::string::npos);  // no text in the binary stream
    const auto truth = nlohmann::json::parse(slurp(dir / "ctl.json"));
    REQUIRE(truth["commands"].size() == 6);
    for (const auto& c : truth["commands"]) CHECK(c["from"] == "control");
    CHECK(truth["times"].contains("extensometer_off_s"));
    fs::remove_all(dir);
}

// A pty holds about 18 KB between writer and reader. A reader as slow as a
// 38400-baud line (3 KB/s here) needs about 6 s to take that tail after the
// simulator has written its last byte; the pty must stay open until it has,
// or the tail is thrown away when the master closes. The bytes must equal a
// file run with the same seed (same seed, same bytes).
TEST_CASE("pty: a slow reader still gets every byte before the pty closes") {
    const fs::path dir = scratch();
    const std::vector<std::string> opts{"--fast", "--seed", "4", "--rate", "100", "--max-time", "6", "--format", "lines"};
    std::string file_args = "--out " + (dir / "same.txt").string();
    for (const auto& o : opts) file_args += " " + o;
    REQUIRE(run(file_args) == 0);
    const std::string expected = slurp(dir / "same.txt");
    REQUIRE(expected.size() > 20000);  // more than the pty holds
    std::vector<std::string> args{"--pty"};
    args.insert(args.end(), opts.begin(), opts.end());
    const pid_t pid = spawn(args, dir / "announce.txt");
    const std::string announce = first_line_of(dir / "announce.txt");
    REQUIRE_THAT(announce, Catch::StartsWith("pty /dev/"));
    const int fd = ::open(announce.substr(4).c_str(), O_RDONLY | O_NOCTTY);
    REQUIRE(fd >= 0);
    std::string got;
    const auto until = std::chrono::steady_clock::now() + std::chrono::seconds(30);
    while (std::chrono::steady_clock::now() < until) {
        pollfd p{fd, POLLIN, 0};
        if (::poll(&p, 1, 2000) <= 0) break;
        char buf[300];
        const ssize_t n = ::read(fd, buf, sizeof buf);
        if (n <= 0) break;  // EIO once the simulator has closed the pty
        got.append(buf, static_cast<std::size_t>(n));
        std::this_thread::sleep_for(std::chrono::milliseconds(100));
    }
    ::close(fd);
    CHECK(wait_exit(pid) == 0);
    INFO("got " << got.size() << " of " << expected.size() << " bytes");
    CHECK(got == expected);
    fs::remove_all(dir);
}

// The demo rig's command line: --control pty:LINK points a symbolic link at
// the pty (a stable name, as udev's /dev/serial/by-id gives a USB adapter),
// replacing an old link in one step; commands sent through the link are
// answered there; the link goes with the simulator. A plain file in the way is
// refused, never overwritten.
TEST_CASE("pty control port behind a link: re-pointed at start, answered through it, removed at the end") {
    const fs::path dir = scratch();
    const fs::path link = dir / "frame-control";
    fs::create_symlink("/dev/null", link);  // left by an earlier run
    const pid_t pid = spawn({"--out", (dir / "stream.txt").string(), "--realtime", "--speed", "20", "--material",
                             "harbourline-6061t6-lot12", "--control", "pty:" + link.string()},
                            dir / "announce.txt");
    const std::string announce = first_line_of(dir / "announce.txt");
    REQUIRE_THAT(announce, Catch::StartsWith("pty /dev/") && Catch::EndsWith(" control"));
    const std::string pty = announce.substr(4, announce.rfind(' ') - 4);
    CHECK(fs::read_symlink(link) == pty);
    const int fd = ::open(link.c_str(), O_RDWR | O_NOCTTY);
    REQUIRE(fd >= 0);
    const std::string ask = "ping\nstop\n";
    REQUIRE(::write(fd, ask.data(), ask.size()) == static_cast<ssize_t>(ask.size()));
    std::string seen;
    read_until(fd, "#ok stop\n", seen);
    CHECK(seen.find("#ok ping\n") != std::string::npos);
    CHECK(seen.find("#ok stop\n") != std::string::npos);
    ::close(fd);
    CHECK(wait_exit(pid) == 0);
    CHECK_FALSE(fs::is_symlink(fs::symlink_status(link)));

    { std::ofstream(link) << "not a link"; }
    const fs::path err = dir / "err.txt";
    CHECK(run("--out /dev/null --fast --control pty:" + link.string(), err) == 2);
    CHECK_THAT(slurp(err), Catch::Contains("is not a symbolic link"));
    CHECK(slurp(link) == "not a link");
    fs::remove_all(dir);
}
