// See replay_source.hpp.
#include "replay_source.hpp"

#include <boost/asio/post.hpp>

namespace tensile::drivers {

namespace asio = boost::asio;

std::shared_ptr<ReplaySource> ReplaySource::create(asio::io_context& io, ReplaySourceConfig cfg,
                                                   std::shared_ptr<spdlog::logger> log) {
    return std::shared_ptr<ReplaySource>(new ReplaySource(io, std::move(cfg), std::move(log)));
}

ReplaySource::ReplaySource(asio::io_context& io, ReplaySourceConfig cfg, std::shared_ptr<spdlog::logger> log)
    : io_(io), cfg_(std::move(cfg)), log_(log ? std::move(log) : spdlog::default_logger()), timer_(io) {}

void ReplaySource::change(SourceState s, const std::string& detail) {
    if (s == state_) return;
    state_ = s;
    log_->info("source {}: {} {}", cfg_.name, name_of(s), detail);
    if (handlers_.on_state) handlers_.on_state(s);
}

void ReplaySource::start(SourceHandlers handlers) {
    handlers_ = std::move(handlers);
    if (const auto ec = reader_.open(cfg_.path)) {
        const std::string why = ec == std::errc::illegal_byte_sequence ? "not a byte capture (no TNSLCAP1 header)" : ec.message();
        change(SourceState::finished, "(cannot replay " + cfg_.path + ": " + why + ")");
        return;
    }
    started_ = std::chrono::steady_clock::now();
    change(SourceState::connected, "replaying " + cfg_.path);
    asio::post(io_, [self = shared_from_this()] { self->step(); });
}

void ReplaySource::stop() {
    timer_.cancel();
    reader_.close();
    change(SourceState::stopped, "");
}

void ReplaySource::send(std::string, SendDone done) {
    if (done) asio::post(io_, [d = std::move(done)] { d(std::make_error_code(std::errc::operation_not_supported)); });
}

void ReplaySource::step() {
    if (state_ != SourceState::connected) return;
    bool torn = false;
    const auto rec = reader_.next(torn);
    if (!rec) {
        reader_.close();
        change(SourceState::finished, torn ? "(capture ends inside a record; the torn tail was skipped)"
                                           : "(" + std::to_string(records_) + " records)");
        return;
    }
    ++records_;
    auto deliver = [this, t = rec->t_s, bytes = std::vector<std::byte>(rec->bytes.begin(), rec->bytes.end())] {
        if (handlers_.on_bytes) handlers_.on_bytes(bytes, cfg_.time_origin_s + t);
    };
    if (!cfg_.original_timing) {
        deliver();
        asio::post(io_, [self = shared_from_this()] { self->step(); });
        return;
    }
    const auto due = started_ + std::chrono::duration_cast<std::chrono::steady_clock::duration>(
                                    std::chrono::duration<double>(rec->t_s / (cfg_.speed > 0 ? cfg_.speed : 1.0)));
    timer_.expires_at(due);
    timer_.async_wait([self = shared_from_this(), deliver = std::move(deliver)](boost::system::error_code ec) {
        if (ec || self->state_ != SourceState::connected) return;
        deliver();
        self->step();
    });
}

}  // namespace tensile::drivers
