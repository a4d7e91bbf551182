// Serial source: a port opened through SerialHandle (libserialport, or termios
// for pseudo-terminals), read asynchronously on its file descriptor with an
// Asio stream_descriptor. A port that fails (USB cable pulled, pty master
// closed) is closed, reported as a gap, and reopened with capped backoff.
// A pseudo-terminal is the exception: once it hangs up its name is dead (the
// kernel gives the number to the next pty opened, by any program), so it is
// reopened only through a link that has been re-pointed since; a source that
// kept retrying /dev/pts/N would read another program's stream and take part
// of its bytes. Only one reader per port (serial_port.hpp).
// RTS/DTR can be driven while open (relay outputs). Never throws after
// construction; errors become state changes, gaps and error codes.
#pragma once

#include <deque>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include <boost/asio/io_context.hpp>
#include <boost/asio/posix/stream_descriptor.hpp>
#include <boost/asio/steady_timer.hpp>

#include "byte_source.hpp"
#include "link_keeper.hpp"
#include "serial_port.hpp"

namespace tensile::drivers {

struct SerialSourceConfig {
    std::string name;
    std::string path;
    SerialSettings settings;
    BackoffConfig backoff;
    std::size_t read_chunk = 4096;
    std::size_t max_send_queue = 16;
};

class SerialSource final : public ByteSource, public std::enable_shared_from_this<SerialSource> {
public:
    static std::shared_ptr<SerialSource> create(boost::asio::io_context& io, SerialSourceConfig cfg,
                                                std::shared_ptr<spdlog::logger> log = nullptr);

    void start(SourceHandlers handlers) override;
    void stop() override;
    void send(std::string bytes, SendDone done) override;
    [[nodiscard]] const std::string& name() const override { return keeper_.name(); }
    [[nodiscard]] SourceState state() const override { return keeper_.state(); }

    // Raise or drop RTS/DTR now (relay signal). Error when not open or unsupported (ptys).
    std::error_code set_line(ModemLine line, bool on, std::string& detail) { return handle_.set_line(line, on, detail); }
    [[nodiscard]] bool via_termios() const { return handle_.via_termios(); }

private:
    SerialSource(boost::asio::io_context& io, SerialSourceConfig cfg, std::shared_ptr<spdlog::logger> log);
    void open();
    void read();
    void fail(const std::string& reason);
    void write_next();
    void close_port();

    boost::asio::io_context& io_;
    SerialSourceConfig cfg_;
    LinkKeeper keeper_;
    Backoff backoff_;
    SerialHandle handle_;
    PortName opened_name_;                  // the configured name as it was when the port opened
    std::optional<PortName> hung_up_name_;  // set when a pty hung up: reopen only once the name differs
    boost::asio::posix::stream_descriptor stream_;
    boost::asio::steady_timer timer_;
    std::vector<std::byte> buf_;
    SendQueue sendq_;
    bool running_ = false;
    std::uint64_t generation_ = 0;
};

}  // namespace tensile::drivers
