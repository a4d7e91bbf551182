// Serial source over a pseudo-terminal: the test holds the master side (as the
// simulator's --pty ports do) and the source opens the slave through termios.
#include <catch2/catch.hpp>

#include <fcntl.h>
#include <termios.h>
#include <unistd.h>

#include <cstdlib>
#include <string>

#include <boost/asio/io_context.hpp>

#include "drivers/parser_registry.hpp"
#include "drivers/serial_source.hpp"

using namespace tensile::drivers;

namespace {

struct Pty {
    int master = -1;
    std::string slave;
    Pty() {
        master = ::posix_openpt(O_RDWR | O_NOCTTY);
        REQUIRE(master >= 0);
        ::fcntl(master, F_SETFL, ::fcntl(master, F_GETFL) | O_NONBLOCK);
        REQUIRE(::grantpt(master) == 0);
        REQUIRE(::unlockpt(master) == 0);
        slave = ::ptsname(master);
    }
    ~Pty() { close(); }
    void close() {
        if (master >= 0) ::close(master);
        master = -1;
    }
    void write(const std::string& s) const { REQUIRE(::write(master, s.data(), s.size()) == static_cast<ssize_t>(s.size())); }
    std::string read_some() const {
        char b[256];
        const ssize_t n = ::read(master, b, sizeof b);
        return n > 0 ? std::string(b, static_cast<std::size_t>(n)) : std::string();
    }
};

template <class Pred>
bool run_until(boost::asio::io_context& io, Pred done, int max_ms = 3000) {
    for (int i = 0; i < max_ms / 5 && !done(); ++i) {
        io.restart();
        io.run_for(std::chrono::milliseconds(5));
    }
    return done();
}

FormatConfig two_channels() {
    FormatConfig f;
    f.time_field = 0;
    ChannelSpec force;
    force.name = "force";
    force.field = 1;
    ChannelSpec ext;
    ext.name = "extension";
    ext.unit = tensile::LengthUnit::millimetre;
    ext.field = 2;
    f.channels = {force, ext};
    return f;
}

}  // namespace

TEST_CASE("pty: the slave is recognised as a pseudo-terminal", "[pty][serial]") {
    Pty pty;
    CHECK(is_pseudo_terminal(pty.slave));
    CHECK_FALSE(is_pseudo_terminal("/dev/null"));
}

TEST_CASE("pty source: lines written on the master arrive as samples, and commands go back", "[pty][serial][source]") {
    Pty pty;
    boost::asio::io_context io;
    SerialSourceConfig cfg;
    cfg.name = "load";
    cfg.path = pty.slave;
    cfg.settings.baud = 115200;
    auto src = SerialSource::create(io, cfg);
    const auto parser = builtin_formats().make(two_channels());
    std::vector<Sample> samples;
    std::vector<std::string> messages;
    parser->on_message([&](std::string_view m) { messages.emplace_back(m); });
    std::vector<GapEvent> gaps;
    src->start({[&](std::span<const std::byte> b, double) { parser->feed(b, samples); },
                [&](SourceState s) {
                    if (s != SourceState::connected) parser->break_stream();
                },
                [&](const GapEvent& g) { gaps.push_back(g); }});
    REQUIRE(src->state() == SourceState::connected);
    CHECK(src->via_termios());

    std::string all;
    for (int i = 0; i < 200; ++i) all += std::to_string(1000 * i) + "," + std::to_string(i) + " N," + std::to_string(i) + "e-3 mm\r\n";
    all += "#ok ping\r\n";
    // Write in uneven pieces so reads see torn lines.
    for (std::size_t at = 0; at < all.size(); at += 777) pty.write(all.substr(at, 777));
    REQUIRE(run_until(io, [&] { return samples.size() == 400 && messages.size() == 1; }));
    for (int i = 0; i < 200; ++i) {
        CHECK(samples[2 * i].value == i);
        CHECK(samples[2 * i + 1].value == Approx(i * 1e-3).epsilon(1e-15));
    }
    CHECK(parser->counters().stream.bad_records == 0);

    std::error_code sent{std::make_error_code(std::errc::timed_out)};
    src->send("hold\n", [&](std::error_code ec) { sent = ec; });
    REQUIRE(run_until(io, [&] { return !sent; }));
    std::string got;
    REQUIRE(run_until(io, [&] { return (got += pty.read_some()).size() >= 5; }));
    CHECK(got == "hold\n");

    // A pty has no modem lines: raising RTS must be reported as an error, not silently accepted.
    std::string detail;
    CHECK(src->set_line(ModemLine::rts, true, detail));
    CHECK_FALSE(detail.empty());

    // The device goes away: the source reports the loss as an open gap and keeps retrying.
    pty.close();
    REQUIRE(run_until(io, [&] { return !gaps.empty(); }));
    CHECK(gaps[0].open());
    CHECK(src->state() == SourceState::waiting);
    src->stop();
    io.restart();
    io.run_for(std::chrono::milliseconds(20));
}

TEST_CASE("serial source: a missing port leaves it waiting with a clear reason", "[serial][source]") {
    boost::asio::io_context io;
    SerialSourceConfig cfg;
    cfg.name = "ext";
    cfg.path = "/dev/does-not-exist-tensiled";
    auto src = SerialSource::create(io, cfg);
    std::vector<SourceState> states;
    src->start({nullptr, [&](SourceState s) { states.push_back(s); }, nullptr});
    CHECK(states == std::vector<SourceState>{SourceState::connecting, SourceState::waiting});
    src->stop();
    io.run_for(std::chrono::milliseconds(10));
}

TEST_CASE("serial ports can be listed", "[serial]") {
    std::string error;
    const auto ports = list_serial_ports(error);
    CHECK(error.empty());
    for (const auto& p : ports) CHECK_FALSE(p.path.empty());
}

TEST_CASE("serial handle: line settings reach the terminal", "[pty][serial]") {
    Pty pty;
    SerialSettings s;
    s.baud = 9600;
    s.data_bits = 7;
    s.parity = Parity::odd;
    s.stop_bits = 2;
    s.flow = FlowControl::xonxoff;
    SerialHandle h;
    std::string detail;
    REQUIRE_FALSE(h.open(pty.slave, s, detail));
    REQUIRE(h.via_termios());
    termios t{};
    REQUIRE(::tcgetattr(h.fd(), &t) == 0);
    CHECK(::cfgetispeed(&t) == B9600);
    CHECK(::cfgetospeed(&t) == B9600);
    // The Linux pty driver forces CS8 and clears PARENB whatever is asked
    // (pty_set_termios in drivers/tty/pty.c), so those two cannot be seen here.
    CHECK((t.c_cflag & CSIZE) == CS8);
    CHECK((t.c_cflag & PARODD) != 0);
    CHECK((t.c_cflag & CSTOPB) != 0);
    CHECK((t.c_iflag & IXON) != 0);
    CHECK((t.c_lflag & (ICANON | ECHO)) == 0);  // raw: no line editing, no echo back to the device

    s.baud = 12345;  // not a termios rate
    CHECK(h.open(pty.slave, s, detail) == std::errc::invalid_argument);
    CHECK(detail.find("12345") != std::string::npos);
}

TEST_CASE("pty source: a virtual port that goes away and comes back is reopened, one gap", "[pty][serial][source]") {
    // socat-style: the configured path is a link that is re-pointed at a new pty.
    const std::string link = "/tmp/tensiled-drv-vport-" + std::to_string(::getpid());
    auto first = std::make_unique<Pty>();
    ::unlink(link.c_str());
    REQUIRE(::symlink(first->slave.c_str(), link.c_str()) == 0);

    boost::asio::io_context io;
    SerialSourceConfig cfg;
    cfg.name = "vport";
    cfg.path = link;
    cfg.backoff = {0.05, 0.5, 0.2};
    auto src = SerialSource::create(io, cfg);
    const auto parser = builtin_formats().make(two_channels());
    std::vector<Sample> samples;
    std::vector<GapEvent> gaps;
    src->start({[&](std::span<const std::byte> b, double) { parser->feed(b, samples); },
                [&](SourceState s) {
                    if (s != SourceState::connected) parser->break_stream();
                },
                [&](const GapEvent& g) { gaps.push_back(g); }});
    REQUIRE(src->state() == SourceState::connected);
    first->write("1000,1 N,0.1 mm\n2000,2 N,0.2");  // the second line is torn by the loss
    REQUIRE(run_until(io, [&] { return samples.size() == 2; }));
    first->close();
    REQUIRE(run_until(io, [&] { return gaps.size() == 1; }));

    Pty second;
    ::unlink(link.c_str());
    REQUIRE(::symlink(second.slave.c_str(), link.c_str()) == 0);
    const double back_at = host_now_s();
    REQUIRE(run_until(io, [&] { return src->state() == SourceState::connected; }, 3000));
    second.write("3000,3 N,0.3 mm\n");
    REQUIRE(run_until(io, [&] { return samples.size() == 4; }));
    REQUIRE(gaps.size() == 2);
    CHECK(gaps[1].end_s - back_at < 2.0);  // issue 4: within 2 s of the device coming back
    CHECK(samples[2].value == 3.0);
    CHECK(parser->counters().stream.bad_records == 1);  // the torn "2000,2 N,0.2"
    src->stop();
    io.restart();
    io.run_for(std::chrono::milliseconds(10));
    ::unlink(link.c_str());
}

// Issue 4: a pty's number is handed to the next pty opened by any program.
// A source that kept retrying /dev/pts/N after its pty hung up read the next
// owner's stream, and a tty shares its bytes between its readers, so both
// streams silently lost records (reproduced: one stale reader beside the
// binary pty test cost it 15,731 of 57,391 frames, the pattern seen in CI).
TEST_CASE("pty source: a pty that hung up is not reopened when its number comes back for another program", "[pty][serial][source]") {
    auto first = std::make_unique<Pty>();
    const std::string name = first->slave;
    boost::asio::io_context io;
    SerialSourceConfig cfg;
    cfg.name = "stale";
    cfg.path = name;
    cfg.backoff = {0.02, 0.05, 0.2};
    auto src = SerialSource::create(io, cfg);
    const auto parser = builtin_formats().make(two_channels());
    std::vector<Sample> samples;
    std::vector<GapEvent> gaps;
    src->start({[&](std::span<const std::byte> b, double) { parser->feed(b, samples); }, nullptr,
                [&](const GapEvent& g) { gaps.push_back(g); }});
    first->write("1000,1 N,0.1 mm\n");
    REQUIRE(run_until(io, [&] { return samples.size() == 2; }));
    first->close();
    REQUIRE(run_until(io, [&] { return gaps.size() == 1; }));

    // Another program opens ptys until one gets the freed number (the kernel
    // gives the lowest free one, so the first, unless a parallel test took it).
    std::vector<std::unique_ptr<Pty>> others;
    while (others.size() < 16 && (others.empty() || others.back()->slave != name)) others.push_back(std::make_unique<Pty>());
    REQUIRE(others.back()->slave == name);
    others.back()->write("2000,2 N,0.2 mm\n");
    io.restart();
    io.run_for(std::chrono::milliseconds(400));  // eight backoff periods or more
    CHECK(samples.size() == 2);                  // nothing of the other program's stream
    CHECK(src->state() == SourceState::waiting);
    // The bytes are still there for the pty's own reader.
    const int own = ::open(name.c_str(), O_RDWR | O_NOCTTY | O_NONBLOCK);
    REQUIRE(own >= 0);
    termios t{};
    ::tcgetattr(own, &t);
    ::cfmakeraw(&t);
    ::tcsetattr(own, TCSANOW, &t);
    char buf[64];
    ssize_t n = -1;
    for (int i = 0; i < 100 && n <= 0; ++i, ::usleep(5000)) n = ::read(own, buf, sizeof buf);
    CHECK(std::string(buf, static_cast<std::size_t>(std::max<ssize_t>(n, 0))) == "2000,2 N,0.2 mm\n");
    ::close(own);
    src->stop();
    io.restart();
    io.run_for(std::chrono::milliseconds(10));
}

TEST_CASE("serial handle: a port already read by another source is refused, naming why", "[pty][serial]") {
    Pty pty;
    SerialHandle a, b;
    std::string detail;
    REQUIRE_FALSE(a.open(pty.slave, SerialSettings{}, detail));
    CHECK(b.open(pty.slave, SerialSettings{}, detail) == std::errc::device_or_resource_busy);
    CHECK(detail.find("in use by another reader") != std::string::npos);
    CHECK_FALSE(b.is_open());
    a.close();
    CHECK_FALSE(b.open(pty.slave, SerialSettings{}, detail));  // free again once the first has let go
}
