// Test helpers for parsers: run a stream through a fresh parser in given
// pieces, and compare sample lists (NaN equals NaN here: absence is data).
#pragma once

#include <catch2/catch.hpp>

#include <cmath>
#include <string>
#include <string_view>
#include <vector>

#include "drivers/parser_registry.hpp"

namespace drv_test {

using namespace tensile::drivers;

struct Run {
    std::vector<Sample> samples;
    ParserCounters counters;
    std::vector<std::string> messages;
};

inline Run run_pieces(const FormatConfig& cfg, std::string_view stream, const std::vector<std::size_t>& cuts,
                      bool break_at_end = false) {
    const auto reg = builtin_formats();
    auto p = reg.make(cfg);
    Run r;
    p->on_message([&](std::string_view m) { r.messages.emplace_back(m); });
    std::size_t at = 0;
    for (std::size_t c : cuts) {
        p->feed(stream.substr(at, c - at), r.samples);
        at = c;
    }
    p->feed(stream.substr(at), r.samples);
    if (break_at_end) p->break_stream();
    r.counters = p->counters();
    return r;
}

inline Run run_whole(const FormatConfig& cfg, std::string_view stream, bool break_at_end = false) {
    return run_pieces(cfg, stream, {}, break_at_end);
}

inline bool same_value(double a, double b) { return (std::isnan(a) && std::isnan(b)) || a == b; }

inline bool same(const Sample& a, const Sample& b) {
    return a.channel == b.channel && a.flags == b.flags && a.quantity == b.quantity && a.stamp_kind == b.stamp_kind &&
           a.stamp == b.stamp && same_value(a.value, b.value) && same_value(a.time_s, b.time_s);
}

inline bool same(const Run& a, const Run& b) {
    if (a.samples.size() != b.samples.size() || !(a.counters == b.counters) || a.messages != b.messages) return false;
    for (std::size_t i = 0; i < a.samples.size(); ++i)
        if (!same(a.samples[i], b.samples[i])) return false;
    return true;
}

// Every two-piece split and the one-byte-at-a-time feed give what feeding
// whole gives; checked both as is and after break_stream() at the end (which
// counts what was left buffered, so the buffered state must agree too).
inline void check_split_invariance(const FormatConfig& cfg, std::string_view stream) {
    for (const bool brk : {false, true}) {
        INFO("break_stream at the end: " << brk);
        const Run whole = run_whole(cfg, stream, brk);
        for (std::size_t cut = 1; cut < stream.size(); ++cut) {
            INFO("split at byte " << cut);
            REQUIRE(same(run_pieces(cfg, stream, {cut}, brk), whole));
        }
        std::vector<std::size_t> every;
        for (std::size_t i = 1; i < stream.size(); ++i) every.push_back(i);
        INFO("one byte at a time");
        REQUIRE(same(run_pieces(cfg, stream, every, brk), whole));
    }
}

inline ChannelSpec channel(std::string name, ChannelUnit unit, int field = -1, std::string key = {}) {
    ChannelSpec c;
    c.name = std::move(name);
    c.unit = unit;
    c.field = field;
    c.key = std::move(key);
    return c;
}

}  // namespace drv_test
