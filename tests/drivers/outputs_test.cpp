// Command outputs over TCP against an in-test rig that answers as
// wire-formats.md says (`#ok <cmd>` / `#error ...`), interleaved with data
// lines, and one that stays silent; relay output on a pty (no modem lines).
#include <catch2/catch.hpp>

#include <cerrno>
#include <sys/ioctl.h>

#include <fcntl.h>
#include <unistd.h>

#include <atomic>
#include <thread>

#include <boost/asio.hpp>

#include "drivers/outputs.hpp"
#include "drivers/parser_registry.hpp"
#include "drivers/tcp_source.hpp"

using namespace tensile::drivers;
namespace asio = boost::asio;
using asio::ip::tcp;

TEST_CASE("commands: ack, retry after a lost ack, refusal, timeout", "[outputs][tcp]") {
    asio::io_context sio;
    tcp::acceptor acc(sio, tcp::endpoint(asio::ip::make_address("127.0.0.1"), 0));
    const auto port = acc.local_endpoint().port();
    std::vector<std::string> heard;
    std::thread rig([&] {
        auto s = acc.accept();
        asio::streambuf in;
        int holds = 0;
        boost::system::error_code ec;
        while (asio::read_until(s, in, '\n', ec)) {
            std::istream is(&in);
            std::string line;
            std::getline(is, line);
            heard.push_back(line);
            std::string answer = "1000,12.5 N\n";  // a data line before every answer
            if (line == "hold" && ++holds == 2) answer += "#ok hold\n";  // the first ack is "lost"
            if (line == "stop") answer += "#error stop refused by test rig\n";
            if (line == "quit") break;
            // "ping" is never answered
            asio::write(s, asio::buffer(answer), ec);
        }
    });

    asio::io_context io;
    TcpSourceConfig lc;
    lc.name = "rig";
    lc.host = "127.0.0.1";
    lc.port = port;
    auto link = TcpSource::create(io, lc);
    const auto parser = builtin_formats().make([] {
        FormatConfig f;
        f.time_field = 0;
        ChannelSpec c;
        c.name = "force";
        c.field = 1;
        f.channels = {c};
        return f;
    }());
    auto sender = CommandSender::create(io, link, {.name = "frame", .ack_timeout_s = 0.2, .retries = 1});
    parser->on_message([&](std::string_view m) { sender->on_device_message(m); });
    std::vector<Sample> samples;
    std::vector<CommandResult> results;
    link->start({[&](std::span<const std::byte> b, double) { parser->feed(b, samples); },
                 [&](SourceState s) {
                     if (s == SourceState::connected) {
                         for (const char* c : {"hold", "stop", "ping"})
                             sender->submit(c, [&](const CommandResult& r) {
                                 results.push_back(r);
                                 if (results.size() == 3) link->send("quit\n", [&](std::error_code) { link->stop(); });
                             });
                     }
                 },
                 nullptr});
    CHECK_FALSE(sender->submit("two\nlines", nullptr));
    io.run_for(std::chrono::seconds(5));
    rig.join();

    REQUIRE(results.size() == 3);
    CHECK(results[0].command == "hold");
    CHECK(results[0].outcome == CommandOutcome::acknowledged);
    CHECK(results[0].attempts == 2);
    CHECK(results[0].reply == "#ok hold");
    CHECK(results[0].done_s - results[0].first_sent_s >= 0.2);  // waited one ack timeout before resending
    CHECK(results[1].outcome == CommandOutcome::refused);
    CHECK(results[1].reply == "#error stop refused by test rig");
    CHECK(results[1].attempts == 1);
    CHECK(results[2].outcome == CommandOutcome::timed_out);
    CHECK(results[2].attempts == 2);
    CHECK(results[2].done_s - results[2].first_sent_s == Approx(0.4).margin(0.15));  // two timeouts, not one or three
    CHECK(heard == std::vector<std::string>{"hold", "hold", "stop", "ping", "ping", "quit"});
    CHECK(samples.size() == 5);  // data lines kept flowing between the answers
    CHECK(parser->counters().stream.device_messages == 2);
}

TEST_CASE("commands: a queue that is full refuses at once", "[outputs]") {
    asio::io_context io;
    TcpSourceConfig lc;
    lc.name = "none";
    lc.host = "127.0.0.1";
    lc.port = 1;
    auto link = TcpSource::create(io, lc);
    auto sender = CommandSender::create(io, link, {.name = "frame", .ack_timeout_s = 10, .max_queue = 2});
    std::vector<CommandOutcome> outcomes;
    CHECK(sender->submit("hold", nullptr));
    CHECK(sender->submit("resume", nullptr));
    CHECK_FALSE(sender->submit("stop", [&](const CommandResult& r) { outcomes.push_back(r.outcome); }));
    io.run_for(std::chrono::milliseconds(20));
    CHECK(outcomes == std::vector<CommandOutcome>{CommandOutcome::not_sent});
}

TEST_CASE("relay: RTS on a pty reports the failure", "[outputs][pty]") {
    const int master = ::posix_openpt(O_RDWR | O_NOCTTY);
    REQUIRE(master >= 0);
    REQUIRE(::grantpt(master) == 0);
    REQUIRE(::unlockpt(master) == 0);
    asio::io_context io;
    SerialSourceConfig pc;
    pc.name = "frame-io";
    pc.path = ::ptsname(master);
    auto port = SerialSource::create(io, pc);
    port->start({});
    REQUIRE(port->state() == SourceState::connected);
    RelayOutput relay("hold-relay", port, ModemLine::dtr);
    // The Linux pty driver implements no modem-control ioctls (TIOCMGET, TIOCMBIS
    // and TIOCMBIC answer ENOTTY), so the relay's success path cannot be shown on
    // a pty; it needs a real port. The failure must be the kernel's answer, passed on.
    const int slave = ::open(pc.path.c_str(), O_RDWR | O_NOCTTY);
    REQUIRE(slave >= 0);
    int lines = 0;
    CHECK(::ioctl(slave, TIOCMGET, &lines) == -1);
    CHECK(errno == ENOTTY);
    ::close(slave);
    CHECK(relay.set(true) == std::errc::inappropriate_io_control_operation);
    CHECK(relay.set(false) == std::errc::inappropriate_io_control_operation);
    port->stop();
    ::close(master);
}
