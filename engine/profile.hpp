// Analysis settings for one kind of test: offsets, modulus window, yield and
// break rules, n-value range and strain-rate limits. Plain values; defaults
// suit ISO 6892-1 Method A on metals. Validation lives with the config loader.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace tensile {

// Phases of a test for strain-rate compliance (ISO 6892-1 Method A).
enum class RatePhase { elastic, yielding, plastic };
inline constexpr int rate_phase_count = 3;
const char* name_of(RatePhase phase);

struct RateBand {
    double min_per_s = 0;  // strain rate limits, 1/s; 0 and 0 means 'not checked'
    double max_per_s = 0;
};

struct StressWindow {
    double low_MPa = 0;
    double high_MPa = 0;
};

struct Profile {
    std::string name = "iso6892-1-method-a";

    std::vector<double> proof_offsets_pct{0.2};      // Rp x, plastic extension in %
    std::vector<double> total_extensions_pct{0.5};   // Rt x, total extension in %

    // Modulus: a fixed stress window, or automatic (steepest well-fitted segment).
    std::optional<StressWindow> modulus_window;
    double modulus_min_r2 = 0.995;        // candidate windows must fit at least this well
    double modulus_window_share = 0.15;   // candidate window width, share of the top stress so far
    double modulus_slope_tolerance = 0.03;  // neighbours within this share of the steepest join the fit

    // Discontinuous yielding: an upper yield is a maximum followed by a drop of at
    // least yield_drop_pct and then yield_drop_strain_pct of strain below it
    // (the usual computer rule for ISO 6892-1, from memory), before
    // yield_max_plastic_pct of plastic strain.
    double yield_drop_pct = 0.5;
    double yield_drop_strain_pct = 0.05;
    double yield_max_plastic_pct = 2.0;

    // n-value (ISO 10275): true stress on true plastic strain, over engineering strain range.
    double n_from_pct = 10.0;
    double n_to_pct = 20.0;

    // Break onset: force falling faster than break_rate_per_s·Fm per second over
    // break_window_s. Fracture: force below fracture_share of its value at break onset.
    double break_rate_per_s = 5.0;
    double break_window_s = 0.02;
    double fracture_share = 0.5;

    // Strain rate over a sliding window, checked against one band per phase.
    // Defaults: ISO 6892-1 Method A, each range ±20 % (from memory, see REFERENCES
    // ISO6892-MethodA): elastic ranges 1–2, yielding ranges 2–3, plastic ranges 2–4.
    double rate_window_s = 1.0;
    RateBand rate_bands[rate_phase_count]{
        {0.00007 * 0.8, 0.00025 * 1.2},
        {0.00025 * 0.8, 0.002 * 1.2},
        {0.00025 * 0.8, 0.0067 * 1.2},
    };

    // Extensometer: travel limit in mm (0 = unknown) and the per-frame jump, as a
    // share of L0, that counts as the extensometer slipping or being removed.
    double extensometer_range_mm = 0;
    double extensometer_jump_share = 0.002;
};

}  // namespace tensile
