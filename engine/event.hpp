// Points detected in a run. Each event carries the frame that made it known,
// the time of that frame, and the stress and strain it refers to (which may be
// an interpolated point earlier than the frame, as for Rp0.2).
#pragma once

#include <cstdint>
#include <string>

namespace tensile {

enum class EventKind {
    modulus,                   // E determined; value = E in MPa
    proof_strength,            // Rp x reached; value = offset in %
    total_extension_strength,  // Rt x reached; value = total extension in %
    upper_yield,               // ReH confirmed
    lower_yield,               // ReL known (end of yielding)
    yield_end,                 // end of the yield-point extension; value = Ae in %
    max_force,                 // force has passed its maximum (confirmed by a drop)
    break_onset,               // force started falling sharply
    fracture,                  // force gone
    extensometer_lost,         // extension signal stopped, jumped or left its range
    rate_out_of_range,         // strain rate left the band of the current phase
    rate_in_range,             // strain rate came back inside the band
};

const char* name_of(EventKind kind);

struct Event {
    EventKind kind;
    double time_s = 0;           // time of the frame that made the event known
    std::uint64_t frame = 0;     // index of that frame
    double stress_MPa = 0;       // stress at the point the event refers to
    double strain = 0;           // engineering strain (fraction, toe-corrected) at that point
    double value = 0;            // kind-specific: E, offset, rate...
    std::string label;           // short symbol, e.g. "Rp0.2", "ReH"
};

}  // namespace tensile
