// Sources → frame pipeline; see acquisition.hpp.
#include "acquisition.hpp"

#include "drivers/replay_source.hpp"
#include "drivers/serial_source.hpp"
#include "drivers/tcp_source.hpp"

namespace tensile {

Acquisition::Acquisition(boost::asio::io_context& io, const DaemonConfig& config, AcquisitionHandlers handlers,
                         std::shared_ptr<spdlog::logger> log)
    : handlers_(std::move(handlers)), log_(std::move(log)), pipeline_(config) {
    for (const auto& sc : config.drivers.sources) {
        switch (sc.kind) {
            case drivers::SourceKind::tcp: sources_.push_back(drivers::TcpSource::create(io, sc.tcp, log_)); break;
            case drivers::SourceKind::serial: sources_.push_back(drivers::SerialSource::create(io, sc.serial, log_)); break;
            case drivers::SourceKind::replay: sources_.push_back(drivers::ReplaySource::create(io, sc.replay, log_)); break;
        }
    }
}

Acquisition::~Acquisition() { stop(); }

void Acquisition::start() {
    for (std::size_t i = 0; i < sources_.size(); ++i) {
        drivers::SourceHandlers h;
        h.on_bytes = [this, i](std::span<const std::byte> bytes, double arrival_s) { on_bytes(i, bytes, arrival_s); };
        h.on_state = [this, i](drivers::SourceState state) {
            if (state != drivers::SourceState::connected) pipeline_.break_stream(i);
            if (handlers_.on_state) handlers_.on_state(pipeline_.source_name(i), state);
        };
        h.on_gap = [this](const drivers::GapEvent& gap) {
            if (handlers_.on_gap) handlers_.on_gap(gap);
        };
        sources_[i]->start(std::move(h));
    }
}

void Acquisition::stop() {
    for (auto& s : sources_) s->stop();
}

void Acquisition::on_bytes(std::size_t i, std::span<const std::byte> bytes, double arrival_s) {
    if (handlers_.on_raw) handlers_.on_raw(pipeline_.source_name(i), bytes, arrival_s);
    ready_.clear();
    pipeline_.feed(i, bytes, arrival_s, ready_);
    if (!ready_.empty()) {
        frames_out_ += ready_.size();
        if (handlers_.on_frames) handlers_.on_frames(ready_);
    }
}

std::shared_ptr<drivers::ByteSource> Acquisition::source(const std::string& name) const {
    const int i = pipeline_.source_index(name);
    return i < 0 ? nullptr : sources_[static_cast<std::size_t>(i)];
}

void Acquisition::on_device_message(const std::string& source, std::function<void(std::string_view)> handler) {
    if (const int i = pipeline_.source_index(source); i >= 0) pipeline_.on_message(static_cast<std::size_t>(i), std::move(handler));
}

std::vector<Acquisition::SourceStatus> Acquisition::status() const {
    std::vector<SourceStatus> out;
    for (std::size_t i = 0; i < sources_.size(); ++i)
        out.push_back({pipeline_.source_name(i), sources_[i]->state(), pipeline_.counters(i)});
    return out;
}

void Acquisition::log_counters() const {
    for (std::size_t i = 0; i < sources_.size(); ++i) {
        const auto& counters = pipeline_.counters(i);
        const auto& c = counters.stream;
        std::uint64_t good = 0, nan = 0, over = 0, range = 0;
        for (const auto& ch : counters.channels) {
            good += ch.good;
            nan += ch.nan;
            over += ch.overload;
            range += ch.out_of_range;
        }
        log_->info("source {}: {} bytes, {} records, {} good samples; bad records {}, resync bytes {}, checksum "
                   "failures {}, lost frames {}, nan {}, overload {}, out of range {}",
                   pipeline_.source_name(i), c.bytes, c.records, good, c.bad_records, c.resync_bytes,
                   c.checksum_failures, c.lost_frames, nan, over, range);
    }
}

}  // namespace tensile
