// The rig's connections when channels travel apart: `--link` specs such as
//     force@1000=tcp:127.0.0.1:0    extension@500=pty    crosshead@100=file:xh.txt
// name the channels one connection carries, that device's sample rate and
// where its bytes go. Each such device has its own crystal, so each link gets
// its own clock: a start offset and a drift in ppm, drawn from the seed
// (clock_for) and written to the truth file. Pure; a bad spec comes back as an
// Error naming the part that was wrong and what was expected.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "encoders.hpp"
#include "engine/result.hpp"

namespace tensile::sim {

enum class LinkTarget { file, tcp, pty };

struct LinkSpec {
    ChannelSet channels = 0;
    double rate_hz = 0;         // 0: the run's --rate
    LinkTarget target = LinkTarget::file;
    std::string where;          // file path or HOST:PORT
    std::string spec;           // as given
};

Result<LinkSpec> parse_link(std::string_view spec);
// Checks a set of links: each channel on at most one link, force on one of them.
std::optional<std::string> check_links(const std::vector<LinkSpec>& links);
// "force,extension" for a channel set.
std::string channel_names(ChannelSet channels);

// A device clock: device seconds = t · (1 + drift) + offset, for simulated time t.
struct DeviceClock {
    double offset_s = 0;
    double drift = 0;  // fraction (1e-6 is 1 ppm)
    [[nodiscard]] double at(double t) const { return t * (1 + drift) + offset_s; }
};

// The clock of link `index` of a run with `seed`: link 0 starts at 0 and keeps
// time exactly; the others start 1 to 60 s later (devices are switched on one
// after another) and drift within ±50 ppm (a plain quartz crystal: common
// practice, from memory).
DeviceClock clock_for(std::uint64_t seed, std::size_t index);

}  // namespace tensile::sim
