// The rig's sensors: load cell, extensometer and crosshead encoder. Each adds
// a zero offset and noise sized from its accuracy class, rounds to its
// resolution and flags readings outside its range; the extensometer has a
// travel limit and can be taken off. The device clock adds jitter. Pure apart
// from the seeded random stream it owns; settings are checked by check().
#pragma once

#include <cstdint>

#include "engine/result.hpp"
#include "engine/specimen.hpp"
#include "machine.hpp"
#include "random.hpp"
#include "sample.hpp"

namespace tensile::sim {

struct SensorConfig {
    double load_cell_capacity_N = 100000;
    double force_class = 1;            // ISO 7500-1 class: 0.5, 1, 2 or 3
    double extensometer_class = 0.5;   // ISO 9513 class: 0.2, 0.5, 1 or 2
    double extensometer_travel_mm = 0; // 0: half the gauge length
    // A working instrument uses only part of what its class permits (our
    // choice): noise standard deviation = share × the class's error limit.
    double force_noise_share = 0.02;
    double extension_noise_share = 0.1;
    double crosshead_noise_mm = 0.0002;
    double clock_jitter_us = 1.0;
};

Result<SensorConfig> check(const SensorConfig& config, const SpecimenGeometry& geometry);

// Error limits of the classes (what the standard permits), and the noise the
// simulator uses from them.
// ISO 7500-1: relative error q within ±class % of the force; below the lowest
// calibrated force (taken as 2 % of capacity, a 1:50 range: common practice)
// the limit stays at its value there.
double force_limit_N(const SensorConfig& c, double force_N);
// ISO 9513: class 0.5 is ±0.5 % of the reading or ±1.5 µm, whichever is larger
// (verified); other classes scale the same way (±class % or ±3·class µm, from memory).
double extension_limit_mm(const SensorConfig& c, double extension_mm);
inline double force_noise_sd_N(const SensorConfig& c, double f) { return c.force_noise_share * force_limit_N(c, f); }
inline double extension_noise_sd_mm(const SensorConfig& c, double x) { return c.extension_noise_share * extension_limit_mm(c, x); }

class Sensors {
public:
    Sensors(const SensorConfig& config, std::uint64_t seed);

    Sample read(const RigState& rig, double time_s, std::uint64_t index);
    void remove_extensometer() { extensometer_on_ = false; }
    [[nodiscard]] bool extensometer_on() const { return extensometer_on_; }

private:
    SensorConfig c_;
    Random force_rng_, extension_rng_, crosshead_rng_, clock_rng_;
    double force_zero_N_ = 0;
    double extension_zero_mm_ = 0;
    std::uint64_t last_time_us_ = 0;
    bool extensometer_on_ = true;
};

}  // namespace tensile::sim
