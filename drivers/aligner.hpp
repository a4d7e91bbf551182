// Merges channels sampled at different rates into Frames at the master
// channel's instants, by linear interpolation of each other channel between its
// two readings around the instant.
//
// A frame waits until every other channel has a reading at or after its
// instant, or until the master has moved max_wait_s past it (the channel is
// late or gone). Then:
//   - readings on both sides, at most max_gap_s apart → interpolated;
//   - readings further apart (a gap in that channel)   → NaN, flag::stale;
//   - only older readings, the newest within stale_after_s → held, flag::stale;
//     older than that → NaN, flag::stale;
//   - an overload reading on either side → NaN, flag::overload.
// Pure and bounded (history and pending frames are capped; the oldest give way).
// Never throws. Out-of-order readings are dropped and counted.
#pragma once

#include <array>
#include <cstdint>
#include <deque>
#include <optional>
#include <string_view>
#include <vector>

#include "engine/frame.hpp"

namespace tensile::drivers {

enum class Role : std::uint8_t { force = 0, extension = 1, crosshead = 2 };
inline constexpr std::size_t role_count = 3;

// The Frame field a channel name feeds (the names of wire-formats.md); none for
// other channels (width, temperature...), which stay outside the Frame.
inline std::optional<Role> role_of(std::string_view channel_name) {
    if (channel_name == "force") return Role::force;
    if (channel_name == "extension") return Role::extension;
    if (channel_name == "crosshead") return Role::crosshead;
    return std::nullopt;
}

struct AlignerConfig {
    Role master = Role::force;
    std::array<bool, role_count> fitted{true, true, true};  // a channel not fitted is always NaN, no flag
    double max_wait_s = 0.05;
    double max_gap_s = 0.05;
    double stale_after_s = 0.1;
    std::size_t max_pending = 8192;  // master readings waiting for the others
    std::size_t max_history = 8192;  // readings kept per channel
};

struct AlignedFrame {
    Frame frame;
    std::array<std::uint8_t, role_count> flags{};  // flag:: bits per role
};

class Aligner {
public:
    explicit Aligner(AlignerConfig cfg) : cfg_(cfg) {}

    // value NaN with flag::overload for an overload reading.
    void push(Role role, double time_s, double value, std::uint8_t flags);

    // Appends every frame that can be decided now.
    void drain(std::vector<AlignedFrame>& out) { emit(out, false); }
    // Appends all pending frames, deciding late channels as if max_wait passed.
    void flush(std::vector<AlignedFrame>& out) { emit(out, true); }

    struct Stats {
        std::uint64_t out_of_order = 0;
        std::uint64_t overflowed = 0;  // readings or pending frames pushed out by the caps
    };
    [[nodiscard]] Stats stats() const { return stats_; }

private:
    struct Point {
        double t;
        double v;
        std::uint8_t flags;
    };
    void emit(std::vector<AlignedFrame>& out, bool force_all);
    bool decidable(double t) const;
    void value_at(std::size_t role, double t, double& v, std::uint8_t& flags) const;
    void prune(double t);

    AlignerConfig cfg_;
    Stats stats_;
    std::array<std::deque<Point>, role_count> history_;  // the master's pending readings live in its slot
    double master_latest_ = -1e300;
};

}  // namespace tensile::drivers
