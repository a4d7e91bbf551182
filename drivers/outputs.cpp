// See outputs.hpp.
#include "outputs.hpp"

#include <cmath>

#include <boost/asio/post.hpp>

namespace tensile::drivers {

namespace asio = boost::asio;

std::string_view name_of(CommandOutcome o) {
    switch (o) {
        case CommandOutcome::acknowledged: return "acknowledged";
        case CommandOutcome::refused: return "refused";
        case CommandOutcome::timed_out: return "not acknowledged";
        case CommandOutcome::not_sent: return "not sent";
    }
    return "?";
}

std::shared_ptr<CommandSender> CommandSender::create(asio::io_context& io, std::shared_ptr<ByteSource> link,
                                                     CommandConfig cfg, std::shared_ptr<spdlog::logger> log) {
    return std::shared_ptr<CommandSender>(new CommandSender(io, std::move(link), std::move(cfg), std::move(log)));
}

CommandSender::CommandSender(asio::io_context& io, std::shared_ptr<ByteSource> link, CommandConfig cfg,
                             std::shared_ptr<spdlog::logger> log)
    : io_(io), link_(std::move(link)), cfg_(std::move(cfg)), log_(log ? std::move(log) : spdlog::default_logger()), timer_(io) {}

bool CommandSender::submit(std::string command, Done done) {
    CommandResult r;
    r.command = std::move(command);
    r.submitted_s = host_now_s();
    r.first_sent_s = NAN;
    std::string why;
    if (r.command.empty() || r.command.find_first_of("\r\n") != std::string::npos) why = "a command is one non-empty line";
    else if (queue_.size() >= cfg_.max_queue) why = "too many commands waiting";
    if (!why.empty()) {
        r.done_s = r.submitted_s;
        r.reply = why;
        log_->warn("output {}: \"{}\" not sent at {:.6f} s: {}", cfg_.name, r.command, r.done_s, why);
        if (done) asio::post(io_, [done = std::move(done), r] { done(r); });
        return false;
    }
    queue_.push_back({std::move(r), std::move(done)});
    if (!busy_) next();
    return true;
}

void CommandSender::next() {
    if (queue_.empty()) return;
    busy_ = true;
    attempt();
}

void CommandSender::attempt() {
    auto& r = queue_.front().result;
    ++r.attempts;
    const double now = host_now_s();
    if (std::isnan(r.first_sent_s)) r.first_sent_s = now;
    log_->info("output {}: sent \"{}\" at {:.6f} s (attempt {})", cfg_.name, r.command, now, r.attempts);
    const auto gen = ++generation_;
    auto self = shared_from_this();
    link_->send(r.command + "\n", [this, self, gen](std::error_code ec) {
        if (ec && gen == generation_)
            log_->warn("output {}: write of \"{}\" failed: {}", cfg_.name, queue_.front().result.command, ec.message());
    });
    // Whether or not the write went out, the answer is awaited for the same time:
    // a failed write is retried like a lost acknowledgement.
    timer_.expires_after(std::chrono::duration_cast<std::chrono::steady_clock::duration>(
        std::chrono::duration<double>(cfg_.ack_timeout_s)));
    timer_.async_wait([this, self, gen](boost::system::error_code e) {
        if (e || gen != generation_ || !busy_) return;
        if (queue_.front().result.attempts <= cfg_.retries) return attempt();
        finish(CommandOutcome::timed_out, "no acknowledgement");
    });
}

void CommandSender::on_device_message(std::string_view line) {
    if (!busy_) return;
    const std::string& cmd = queue_.front().result.command;
    // Only the command word is echoed: "#ok hold".
    const std::string_view word = std::string_view(cmd).substr(0, cmd.find(' '));
    if (line.substr(0, 4) == "#ok " && line.substr(4) == word) return finish(CommandOutcome::acknowledged, std::string(line));
    if (line.substr(0, 6) == "#error") return finish(CommandOutcome::refused, std::string(line));
}

void CommandSender::finish(CommandOutcome outcome, std::string reply) {
    ++generation_;
    timer_.cancel();
    Pending p = std::move(queue_.front());
    queue_.pop_front();
    busy_ = false;
    p.result.outcome = outcome;
    p.result.reply = std::move(reply);
    p.result.done_s = host_now_s();
    const double ms = (p.result.done_s - p.result.first_sent_s) * 1e3;
    if (outcome == CommandOutcome::acknowledged)
        log_->info("output {}: \"{}\" acknowledged at {:.6f} s, {:.1f} ms after sending", cfg_.name, p.result.command,
                   p.result.done_s, ms);
    else
        log_->warn("output {}: \"{}\" {} at {:.6f} s after {} attempts ({})", cfg_.name, p.result.command,
                   name_of(outcome), p.result.done_s, p.result.attempts, p.result.reply);
    if (p.done) p.done(p.result);
    if (!busy_) next();  // the handler may already have started the next one
}

RelayOutput::RelayOutput(std::string name, std::shared_ptr<SerialSource> port, ModemLine line,
                         std::shared_ptr<spdlog::logger> log)
    : name_(std::move(name)), port_(std::move(port)), line_(line), log_(log ? std::move(log) : spdlog::default_logger()) {}

std::error_code RelayOutput::set(bool on) {
    std::string detail;
    const auto ec = port_->set_line(line_, on, detail);
    const char* what = line_ == ModemLine::rts ? "RTS" : "DTR";
    if (ec)
        log_->warn("output {}: {} {} on {} failed at {:.6f} s: {}", name_, on ? "raise" : "drop", what, port_->name(),
                   host_now_s(), detail);
    else
        log_->info("output {}: {} {} {} at {:.6f} s", name_, what, on ? "raised" : "dropped", port_->name(), host_now_s());
    return ec;
}

}  // namespace tensile::drivers
