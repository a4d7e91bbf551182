// Names of engine enums as they appear in JSON, the database and logs, and the
// small lookups on Results. Changing a name here changes stored data: don't.
#include <cmath>

#include "event.hpp"
#include "profile.hpp"
#include "results.hpp"

namespace tensile {

const char* name_of(RatePhase phase) {
    switch (phase) {
        case RatePhase::elastic: return "elastic";
        case RatePhase::yielding: return "yielding";
        case RatePhase::plastic: return "plastic";
    }
    return "?";
}

const char* name_of(EventKind kind) {
    switch (kind) {
        case EventKind::modulus: return "modulus";
        case EventKind::proof_strength: return "proof_strength";
        case EventKind::total_extension_strength: return "total_extension_strength";
        case EventKind::upper_yield: return "upper_yield";
        case EventKind::lower_yield: return "lower_yield";
        case EventKind::yield_end: return "yield_end";
        case EventKind::max_force: return "max_force";
        case EventKind::break_onset: return "break_onset";
        case EventKind::fracture: return "fracture";
        case EventKind::extensometer_lost: return "extensometer_lost";
        case EventKind::rate_out_of_range: return "rate_out_of_range";
        case EventKind::rate_in_range: return "rate_in_range";
    }
    return "?";
}

const char* name_of(StrainSource source) {
    return source == StrainSource::extensometer ? "extensometer" : "crosshead";
}

namespace {
std::optional<double> find(const std::vector<OffsetValue>& values, double offset_pct) {
    for (const auto& v : values)
        if (std::abs(v.offset_pct - offset_pct) < 1e-9) return v.MPa;
    return std::nullopt;
}
}  // namespace

std::optional<double> Results::proof(double offset_pct) const { return find(Rp, offset_pct); }
std::optional<double> Results::total(double extension_pct) const { return find(Rt, extension_pct); }

}  // namespace tensile
