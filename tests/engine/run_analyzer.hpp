// Feeds a whole run through the analyzer, as the daemon and `tensilectl
// analyze` do, and keeps the events and final results for checks.
#pragma once

#include <algorithm>
#include <optional>
#include <vector>

#include "engine/analyzer.hpp"

namespace tensile::testing {

struct Analysed {
    std::vector<Event> events;
    Results results;

    [[nodiscard]] std::optional<Event> first(EventKind kind) const {
        auto it = std::find_if(events.begin(), events.end(), [&](const Event& e) { return e.kind == kind; });
        if (it == events.end()) return std::nullopt;
        return *it;
    }
    [[nodiscard]] std::size_t count(EventKind kind) const {
        return static_cast<std::size_t>(
            std::count_if(events.begin(), events.end(), [&](const Event& e) { return e.kind == kind; }));
    }
};

inline Analysed analyse(const std::vector<Frame>& frames, SpecimenGeometry geometry, Profile profile = {}) {
    Analyzer analyzer(geometry, std::move(profile));
    Analysed out;
    for (const auto& f : frames) analyzer.push(f, out.events);
    out.results = analyzer.finish();
    return out;
}

}  // namespace tensile::testing
