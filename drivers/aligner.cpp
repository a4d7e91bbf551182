// See aligner.hpp.
#include "aligner.hpp"

#include <algorithm>
#include <cmath>

#include "sample.hpp"

namespace tensile::drivers {

namespace {
constexpr std::size_t idx(Role r) { return static_cast<std::size_t>(r); }
}  // namespace

void Aligner::push(Role role, double time_s, double value, std::uint8_t flags) {
    auto& h = history_[idx(role)];
    if (!std::isfinite(time_s) || (!h.empty() && time_s < h.back().t)) {
        ++stats_.out_of_order;
        return;
    }
    const std::size_t cap = role == cfg_.master ? cfg_.max_pending : cfg_.max_history;
    if (h.size() >= cap) {  // the caller stopped draining: the oldest gives way, counted
        ++stats_.overflowed;
        h.pop_front();
    }
    h.push_back({time_s, value, flags});
    if (role == cfg_.master) master_latest_ = time_s;
}

bool Aligner::decidable(double t) const {
    if (master_latest_ - t >= cfg_.max_wait_s) return true;
    for (std::size_t r = 0; r < role_count; ++r) {
        if (r == idx(cfg_.master) || !cfg_.fitted[r]) continue;
        if (history_[r].empty() || history_[r].back().t < t) return false;
    }
    return true;
}

void Aligner::value_at(std::size_t r, double t, double& v, std::uint8_t& flags) const {
    v = absent;
    flags = 0;
    const auto& h = history_[r];
    const auto next = std::lower_bound(h.begin(), h.end(), t, [](const Point& p, double x) { return p.t < x; });
    if (next != h.end() && next->t == t) {
        v = next->v;
        flags = next->flags;
        return;
    }
    const bool has_prev = next != h.begin();
    if (next != h.end()) {
        if (!has_prev) {  // channel started after this instant
            flags = flag::stale;
            return;
        }
        const Point& a = *(next - 1);
        const Point& b = *next;
        if (b.t - a.t > cfg_.max_gap_s) {
            flags = flag::stale;
            return;
        }
        flags = static_cast<std::uint8_t>((a.flags | b.flags) & (flag::overload | flag::resynced | flag::nan));
        if (std::isfinite(a.v) && std::isfinite(b.v)) {
            const double w = (t - a.t) / (b.t - a.t);
            v = a.v + w * (b.v - a.v);
        }
        return;
    }
    if (has_prev && t - h.back().t <= cfg_.stale_after_s) {
        v = h.back().v;
        flags = static_cast<std::uint8_t>(h.back().flags | flag::stale);
        return;
    }
    flags = flag::stale;
}

void Aligner::prune(double t) {
    for (std::size_t r = 0; r < role_count; ++r) {
        if (r == idx(cfg_.master)) continue;
        auto& h = history_[r];
        // Keep the last reading before t: it brackets the next instants.
        while (h.size() >= 2 && h[1].t <= t) h.pop_front();
    }
}

void Aligner::emit(std::vector<AlignedFrame>& out, bool force_all) {
    auto& pending = history_[idx(cfg_.master)];
    while (!pending.empty()) {
        const Point m = pending.front();
        if (!force_all && !decidable(m.t)) break;
        AlignedFrame f;
        f.frame.time_s = m.t;
        double values[role_count];
        for (std::size_t r = 0; r < role_count; ++r) {
            if (r == idx(cfg_.master)) {
                values[r] = m.v;
                f.flags[r] = m.flags;
            } else if (!cfg_.fitted[r]) {
                values[r] = absent;
            } else {
                value_at(r, m.t, values[r], f.flags[r]);
            }
        }
        f.frame.force_N = values[idx(Role::force)];
        f.frame.extension_mm = values[idx(Role::extension)];
        f.frame.crosshead_mm = values[idx(Role::crosshead)];
        out.push_back(f);
        pending.pop_front();
        prune(m.t);
    }
}

}  // namespace tensile::drivers
