// The daemon's hands: command lines to a rig (hold, resume, stop,
// extensometer-off, ping; wire-formats.md) with acknowledgement timeout and
// retry, and RTS/DTR relay signals on a serial port. Every output is logged
// with its host-monotonic time and reported back as a result value.
//
// Safety: these are requests to the frame's controller, not an interlock. The
// frame's own limits, interlocks and emergency stop stay in charge; a command
// that is not acknowledged must be treated as not done.
//
// Policy: one command in flight per link; later ones wait in a bounded queue
// (full → refused at once). A command is resent after each ack timeout up to
// `retries` times (every command of the protocol is safe to repeat). A lost
// connection fails queued sends instead of replaying them later. `#ok <cmd>`
// acknowledges the command in flight; `#error ...` refuses it.
#pragma once

#include <deque>
#include <functional>
#include <memory>
#include <string>

#include <boost/asio/io_context.hpp>
#include <boost/asio/steady_timer.hpp>
#include <spdlog/spdlog.h>

#include "byte_source.hpp"
#include "serial_source.hpp"

namespace tensile::drivers {

struct CommandConfig {
    std::string name;            // the output's name in the rig config
    double ack_timeout_s = 0.5;
    int retries = 2;             // resends after the first attempt
    std::size_t max_queue = 8;
};

enum class CommandOutcome { acknowledged, refused, timed_out, not_sent };
std::string_view name_of(CommandOutcome o);

struct CommandResult {
    std::string command;
    CommandOutcome outcome = CommandOutcome::not_sent;
    int attempts = 0;
    double submitted_s = 0;
    double first_sent_s = 0;  // NaN when never written
    double done_s = 0;
    std::string reply;        // the `#` line that ended it, or why it was not sent
};

class CommandSender : public std::enable_shared_from_this<CommandSender> {
public:
    using Done = std::function<void(const CommandResult&)>;
    static std::shared_ptr<CommandSender> create(boost::asio::io_context& io, std::shared_ptr<ByteSource> link,
                                                 CommandConfig cfg, std::shared_ptr<spdlog::logger> log = nullptr);

    // Queues `command` (one line, no line end). False, with `done` called with
    // not_sent, when the command is malformed or the queue is full.
    bool submit(std::string command, Done done);

    // Give it every `#` line read on the link (Parser::on_message).
    void on_device_message(std::string_view line);

private:
    CommandSender(boost::asio::io_context& io, std::shared_ptr<ByteSource> link, CommandConfig cfg,
                  std::shared_ptr<spdlog::logger> log);
    struct Pending {
        CommandResult result;
        Done done;
    };
    void next();
    void attempt();
    void finish(CommandOutcome outcome, std::string reply);

    boost::asio::io_context& io_;
    std::shared_ptr<ByteSource> link_;
    CommandConfig cfg_;
    std::shared_ptr<spdlog::logger> log_;
    boost::asio::steady_timer timer_;
    std::deque<Pending> queue_;  // front is in flight when busy_
    bool busy_ = false;
    std::uint64_t generation_ = 0;
};

// Raises or drops RTS or DTR on a serial source as a relay signal.
class RelayOutput {
public:
    RelayOutput(std::string name, std::shared_ptr<SerialSource> port, ModemLine line,
                std::shared_ptr<spdlog::logger> log = nullptr);
    // Logged with its time; the error (port closed, pty without modem lines) is returned.
    std::error_code set(bool on);

private:
    std::string name_;
    std::shared_ptr<SerialSource> port_;
    ModemLine line_;
    std::shared_ptr<spdlog::logger> log_;
};

}  // namespace tensile::drivers
