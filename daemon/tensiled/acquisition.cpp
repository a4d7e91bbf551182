// Sources → parsers → time bases → aligner; see acquisition.hpp.
#include "acquisition.hpp"

#include <stdexcept>

#include "drivers/parser_registry.hpp"
#include "drivers/replay_source.hpp"
#include "drivers/serial_source.hpp"
#include "drivers/tcp_source.hpp"

namespace tensile {

namespace {
constexpr int no_role = -1;

int role_of(const std::string& channel) {
    if (channel == "force") return static_cast<int>(drivers::Role::force);
    if (channel == "extension") return static_cast<int>(drivers::Role::extension);
    if (channel == "crosshead") return static_cast<int>(drivers::Role::crosshead);
    return no_role;  // a channel of the rig's own (e.g. width): acquired, counted, not framed
}

drivers::AlignerConfig aligner_config(const DaemonConfig& c) {
    drivers::AlignerConfig a = c.rig.aligner;
    a.fitted = {false, false, false};
    for (const auto& s : c.drivers.sources)
        for (const auto& ch : s.format.channels)
            if (int r = role_of(ch.name); r != no_role) a.fitted[static_cast<std::size_t>(r)] = true;
    return a;
}
}  // namespace

struct Acquisition::Stream {
    drivers::SourceConfig config;
    std::shared_ptr<drivers::ByteSource> source;
    std::unique_ptr<drivers::Parser> parser;
    drivers::TimeBase time;
    std::vector<int> roles;  // per parser channel
    std::vector<drivers::Sample> scratch;
    std::vector<std::function<void(std::string_view)>> message_handlers;

    explicit Stream(const drivers::SourceConfig& c) : config(c), time(c.time) {}
};

Acquisition::Acquisition(boost::asio::io_context& io, const DaemonConfig& config, AcquisitionHandlers handlers,
                         std::shared_ptr<spdlog::logger> log)
    : handlers_(std::move(handlers)), log_(std::move(log)), aligner_(aligner_config(config)) {
    const auto formats = drivers::builtin_formats();
    for (const auto& sc : config.drivers.sources) {
        auto s = std::make_unique<Stream>(sc);
        const auto* format = formats.find(sc.format.format);
        if (!format) throw std::runtime_error("source." + sc.name + ": no parser for format '" + sc.format.format + "'");
        s->parser = format->make(sc.format);
        for (const auto& ch : sc.format.channels) s->roles.push_back(role_of(ch.name));
        switch (sc.kind) {
            case drivers::SourceKind::tcp: s->source = drivers::TcpSource::create(io, sc.tcp, log_); break;
            case drivers::SourceKind::serial: s->source = drivers::SerialSource::create(io, sc.serial, log_); break;
            case drivers::SourceKind::replay: s->source = drivers::ReplaySource::create(io, sc.replay, log_); break;
        }
        Stream* raw = s.get();
        s->parser->on_message([raw](std::string_view line) {
            for (auto& h : raw->message_handlers) h(line);
        });
        streams_.push_back(std::move(s));
    }
}

Acquisition::~Acquisition() { stop(); }

void Acquisition::start() {
    for (auto& sp : streams_) {
        Stream* s = sp.get();
        drivers::SourceHandlers h;
        h.on_bytes = [this, s](std::span<const std::byte> bytes, double arrival_s) { on_bytes(*s, bytes, arrival_s); };
        h.on_state = [this, s](drivers::SourceState state) {
            if (state != drivers::SourceState::connected) s->parser->break_stream();
            if (handlers_.on_state) handlers_.on_state(s->config.name, state);
        };
        h.on_gap = [this](const drivers::GapEvent& gap) {
            if (handlers_.on_gap) handlers_.on_gap(gap);
        };
        s->source->start(std::move(h));
    }
}

void Acquisition::stop() {
    for (auto& s : streams_) s->source->stop();
}

void Acquisition::on_bytes(Stream& s, std::span<const std::byte> bytes, double arrival_s) {
    if (handlers_.on_raw) handlers_.on_raw(s.config.name, bytes, arrival_s);
    s.scratch.clear();
    s.parser->feed(bytes, s.scratch);
    s.time.stamp(s.scratch, arrival_s);
    for (const auto& sample : s.scratch) {
        const int role = s.roles[sample.channel];
        if (role == no_role) continue;
        aligner_.push(static_cast<drivers::Role>(role), sample.time_s, sample.value, sample.flags);
    }
    ready_.clear();
    aligner_.drain(ready_);
    if (!ready_.empty()) {
        frames_out_ += ready_.size();
        if (handlers_.on_frames) handlers_.on_frames(ready_);
    }
}

std::shared_ptr<drivers::ByteSource> Acquisition::source(const std::string& name) const {
    for (const auto& s : streams_)
        if (s->config.name == name) return s->source;
    return nullptr;
}

void Acquisition::on_device_message(const std::string& source, std::function<void(std::string_view)> handler) {
    for (auto& s : streams_)
        if (s->config.name == source) s->message_handlers.push_back(std::move(handler));
}

std::vector<Acquisition::SourceStatus> Acquisition::status() const {
    std::vector<SourceStatus> out;
    for (const auto& s : streams_) out.push_back({s->config.name, s->source->state(), s->parser->counters()});
    return out;
}

void Acquisition::log_counters() const {
    for (const auto& s : streams_) {
        const auto& c = s->parser->counters().stream;
        std::uint64_t good = 0, nan = 0, over = 0, range = 0;
        for (const auto& ch : s->parser->counters().channels) {
            good += ch.good;
            nan += ch.nan;
            over += ch.overload;
            range += ch.out_of_range;
        }
        log_->info("source {}: {} bytes, {} records, {} good samples; bad records {}, resync bytes {}, checksum "
                   "failures {}, lost frames {}, nan {}, overload {}, out of range {}",
                   s->config.name, c.bytes, c.records, good, c.bad_records, c.resync_bytes, c.checksum_failures,
                   c.lost_frames, nan, over, range);
    }
}

}  // namespace tensile
