// See acquisition.hpp.
#include "acquisition.hpp"

#include <spdlog/fmt/fmt.h>  // the fmt that spdlog was built with

namespace tensile::drivers {

std::string describe_new_faults(const ParserCounters& b, const ParserCounters& n, const FormatConfig& cfg) {
    std::string out;
    auto add = [&](std::uint64_t before, std::uint64_t now, std::string_view what) {
        if (now > before) out += fmt::format("{}{} {}", out.empty() ? "" : ", ", now - before, what);
    };
    add(b.stream.bad_records, n.stream.bad_records, "bad records");
    add(b.stream.long_lines, n.stream.long_lines, "over-long lines");
    add(b.stream.checksum_failures, n.stream.checksum_failures, "checksum failures");
    add(b.stream.resync_bytes, n.stream.resync_bytes, "bytes skipped");
    add(b.stream.lost_frames, n.stream.lost_frames, "lost frames");
    add(b.stream.unknown_keys, n.stream.unknown_keys, "unknown keys");
    for (std::size_t c = 0; c < n.channels.size(); ++c) {
        const ChannelCounters zero{};
        const ChannelCounters& cb = c < b.channels.size() ? b.channels[c] : zero;
        const std::string& name = cfg.channels[c].name;
        add(cb.nan, n.channels[c].nan, name + " nan");
        add(cb.overload, n.channels[c].overload, name + " overload");
        add(cb.out_of_range, n.channels[c].out_of_range, name + " out of range");
    }
    return out;
}

Acquisition::Acquisition(std::shared_ptr<ByteSource> source, std::unique_ptr<Parser> parser, TimeBaseConfig time,
                         std::shared_ptr<spdlog::logger> log, double report_every_s)
    : source_(std::move(source)),
      parser_(std::move(parser)),
      time_(time),
      log_(log ? std::move(log) : spdlog::default_logger()),
      report_every_s_(report_every_s) {
    reported_.channels.resize(parser_->config().channels.size());
}

void Acquisition::start(Handlers h) {
    handlers_ = std::move(h);
    parser_->on_message([this](std::string_view m) {
        if (handlers_.on_message) handlers_.on_message(m);
    });
    source_->start({[this](std::span<const std::byte> b, double t) { on_bytes(b, t); },
                    [this](SourceState s) {
                        // A torn record must never be glued to the bytes after a break.
                        if (s != SourceState::connected) parser_->break_stream();
                        if (handlers_.on_state) handlers_.on_state(s);
                    },
                    [this](const GapEvent& g) {
                        if (handlers_.on_gap) handlers_.on_gap(g);
                    }});
}

void Acquisition::on_bytes(std::span<const std::byte> bytes, double arrival_s) {
    batch_.clear();
    parser_->feed(bytes, batch_);
    time_.stamp(batch_, arrival_s);
    if (!batch_.empty() && handlers_.on_samples) handlers_.on_samples(batch_);
    report(arrival_s);
}

void Acquisition::report(double now_s) {
    if (now_s - last_report_s_ < report_every_s_) return;
    last_report_s_ = now_s;
    const auto& now = parser_->counters();
    const std::string faults = describe_new_faults(reported_, now, parser_->config());
    if (!faults.empty()) log_->warn("source {}: since last report: {}", source_->name(), faults);
    reported_ = now;
}

}  // namespace tensile::drivers
