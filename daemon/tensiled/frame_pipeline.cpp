// Bytes to frames; see frame_pipeline.hpp.
#include "frame_pipeline.hpp"

#include <stdexcept>

#include "drivers/parser_registry.hpp"

namespace tensile {

namespace {
constexpr int no_role = -1;

int role_of(const std::string& channel) {
    if (channel == "force") return static_cast<int>(drivers::Role::force);
    if (channel == "extension") return static_cast<int>(drivers::Role::extension);
    if (channel == "crosshead") return static_cast<int>(drivers::Role::crosshead);
    return no_role;  // a channel of the rig's own (e.g. width): parsed and counted, not framed
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

FramePipeline::FramePipeline(const DaemonConfig& config) : aligner_(aligner_config(config)) {
    const auto formats = drivers::builtin_formats();
    streams_.reserve(config.drivers.sources.size());
    for (const auto& sc : config.drivers.sources) {
        const auto* format = formats.find(sc.format.format);
        if (!format) throw std::runtime_error("source." + sc.name + ": no parser for format '" + sc.format.format + "'");
        Stream s{sc.name, sc.time, format->make(sc.format), drivers::TimeBase(sc.time), {}, {}, {}};
        for (const auto& ch : sc.format.channels) s.roles.push_back(role_of(ch.name));
        streams_.push_back(std::move(s));
    }
    // Handlers are looked up through the stream, which no longer moves.
    for (auto& s : streams_) {
        Stream* raw = &s;
        s.parser->on_message([raw](std::string_view line) {
            for (auto& h : raw->message_handlers) h(line);
        });
    }
}

void FramePipeline::reset_time_bases() {
    for (auto& s : streams_) s.time = drivers::TimeBase(s.time_config);
}

int FramePipeline::source_index(std::string_view name) const {
    for (std::size_t i = 0; i < streams_.size(); ++i)
        if (streams_[i].name == name) return static_cast<int>(i);
    return -1;
}

void FramePipeline::on_message(std::size_t i, std::function<void(std::string_view)> handler) {
    streams_[i].message_handlers.push_back(std::move(handler));
}

void FramePipeline::feed(std::size_t i, std::span<const std::byte> bytes, double arrival_s,
                         std::vector<drivers::AlignedFrame>& out) {
    Stream& s = streams_[i];
    s.scratch.clear();
    s.parser->feed(bytes, s.scratch);
    s.time.stamp(s.scratch, arrival_s);
    for (const auto& sample : s.scratch) {
        const int role = s.roles[sample.channel];
        if (role == no_role) continue;
        aligner_.push(static_cast<drivers::Role>(role), sample.time_s, sample.value, sample.flags);
    }
    aligner_.drain(out);
}

}  // namespace tensile
