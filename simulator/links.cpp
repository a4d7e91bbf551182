// Link specs and device clocks; see links.hpp.
#include "links.hpp"

#include <charconv>
#include <cmath>

#include "faults.hpp"
#include "random.hpp"

namespace tensile::sim {

namespace {

const std::string form = "; expected CHANNELS[@RATE]=TARGET, e.g. force@1000=tcp:127.0.0.1:7701, extension@500=pty or "
                         "crosshead=file:xh.txt";

}  // namespace

std::string channel_names(ChannelSet channels) {
    std::string out;
    for (ChannelId c : {ChannelId::force, ChannelId::extension, ChannelId::crosshead})
        if (channels & channel_bit(c)) out += (out.empty() ? "" : ",") + std::string(name_of(c));
    return out;
}

Result<LinkSpec> parse_link(std::string_view text) {
    LinkSpec l;
    l.spec = std::string(text);
    const std::string given = "--link '" + l.spec + "'";
    const auto eq = text.find('=');
    if (eq == std::string_view::npos) return Error{given + " has no '=TARGET'" + form};
    std::string_view channels = text.substr(0, eq);
    const std::string_view target = text.substr(eq + 1);
    if (const auto at = channels.find('@'); at != std::string_view::npos) {
        const std::string_view rate = channels.substr(at + 1);
        channels = channels.substr(0, at);
        const auto r = std::from_chars(rate.data(), rate.data() + rate.size(), l.rate_hz);
        if (r.ec != std::errc() || r.ptr != rate.data() + rate.size() || !(l.rate_hz >= 1 && l.rate_hz <= 1e6))
            return Error{given + ": rate '" + std::string(rate) + "' must be samples per second from 1 to 1000000"};
    }
    while (!channels.empty()) {
        const auto comma = channels.find(',');
        const std::string_view name = channels.substr(0, comma);
        bool known = false;
        for (ChannelId c : {ChannelId::force, ChannelId::extension, ChannelId::crosshead}) {
            if (name != name_of(c)) continue;
            if (l.channels & channel_bit(c)) return Error{given + ": channel '" + std::string(name) + "' named twice"};
            l.channels |= channel_bit(c);
            known = true;
        }
        if (!known) return Error{given + ": channel '" + std::string(name) + "'; expected force, extension or crosshead"};
        if (comma == std::string_view::npos) break;
        channels.remove_prefix(comma + 1);
    }
    if (l.channels == 0) return Error{given + " names no channel" + form};
    if (target == "pty") {
        l.target = LinkTarget::pty;
    } else if (target.substr(0, 4) == "tcp:" && target.size() > 4) {
        l.target = LinkTarget::tcp;
        l.where = std::string(target.substr(4));
    } else if (target.substr(0, 5) == "file:" && target.size() > 5) {
        l.target = LinkTarget::file;
        l.where = std::string(target.substr(5));
    } else {
        return Error{given + ": target '" + std::string(target) + "'; expected pty, tcp:HOST:PORT or file:PATH"};
    }
    return l;
}

std::optional<std::string> check_links(const std::vector<LinkSpec>& links) {
    if (links.empty()) return std::nullopt;  // all channels on one connection
    ChannelSet seen = 0;
    for (const LinkSpec& l : links) {
        if (seen & l.channels)
            return "--link '" + l.spec + "': a channel of it is already on another link; expected each channel on one link";
        seen |= l.channels;
    }
    if (!(seen & channel_bit(ChannelId::force)))
        return std::string("--link: no link carries force; expected force on one of them (the load cell drives the test)");
    return std::nullopt;
}

DeviceClock clock_for(std::uint64_t seed, std::size_t index) {
    if (index == 0) return {};
    Random r(seed ^ (0xC10CC10CC10CC10Cull * (index + 1)));
    DeviceClock c;
    c.offset_s = r.uniform(1, 60);
    c.drift = r.uniform(-50e-6, 50e-6);
    return c;
}

}  // namespace tensile::sim
