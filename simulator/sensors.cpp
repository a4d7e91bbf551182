// Sensor model; see sensors.hpp. Each channel draws from its own random
// stream so that one channel's changes never shift another's noise.
#include "sensors.hpp"

#include <algorithm>
#include <cmath>
#include <string>

namespace tensile::sim {

namespace {
std::string num(double v) { return std::to_string(v); }
bool one_of(double v, std::initializer_list<double> allowed) {
    for (double a : allowed) if (v == a) return true;
    return false;
}
}  // namespace

Result<SensorConfig> check(const SensorConfig& in, const SpecimenGeometry& g) {
    SensorConfig c = in;
    if (!(c.load_cell_capacity_N > 0 && std::isfinite(c.load_cell_capacity_N)))
        return Error{"load cell capacity must be a positive force, got " + num(c.load_cell_capacity_N)};
    if (!one_of(c.force_class, {0.5, 1, 2, 3})) return Error{"force class must be 0.5, 1, 2 or 3 (ISO 7500-1), got " + num(c.force_class)};
    if (!one_of(c.extensometer_class, {0.2, 0.5, 1, 2})) return Error{"extensometer class must be 0.2, 0.5, 1 or 2 (ISO 9513), got " + num(c.extensometer_class)};
    if (!(c.extensometer_travel_mm >= 0 && std::isfinite(c.extensometer_travel_mm)))
        return Error{"extensometer travel must be 0 (half the gauge length) or a positive length in mm, got " + num(c.extensometer_travel_mm)};
    if (c.extensometer_travel_mm == 0) c.extensometer_travel_mm = 0.5 * g.L0_mm;
    if (!(c.force_noise_share >= 0 && c.force_noise_share <= 1)) return Error{"force noise share must be in [0, 1], got " + num(c.force_noise_share)};
    if (!(c.extension_noise_share >= 0 && c.extension_noise_share <= 1)) return Error{"extension noise share must be in [0, 1], got " + num(c.extension_noise_share)};
    if (!(c.crosshead_noise_mm >= 0 && std::isfinite(c.crosshead_noise_mm))) return Error{"crosshead noise must be 0 or positive mm, got " + num(c.crosshead_noise_mm)};
    if (!(c.clock_jitter_us >= 0 && c.clock_jitter_us < 1000)) return Error{"clock jitter must be in [0, 1000) µs, got " + num(c.clock_jitter_us)};
    return c;
}

double force_limit_N(const SensorConfig& c, double force_N) {
    return c.force_class / 100 * std::max(std::abs(force_N), 0.02 * c.load_cell_capacity_N);
}

double extension_limit_mm(const SensorConfig& c, double x) {
    return std::max(c.extensometer_class / 100 * std::abs(x), c.extensometer_class * 0.003);
}

Sensors::Sensors(const SensorConfig& config, std::uint64_t seed) : c_(config), force_rng_(seed), extension_rng_(0), crosshead_rng_(0), clock_rng_(0) {
    extension_rng_ = force_rng_.split();
    crosshead_rng_ = force_rng_.split();
    clock_rng_ = force_rng_.split();
    Random zero = force_rng_.split();
    // Zero offsets within twice the noise at zero: what is left after taring.
    force_zero_N_ = zero.uniform(-2, 2) * force_noise_sd_N(c_, 0);
    extension_zero_mm_ = zero.uniform(-2, 2) * extension_noise_sd_mm(c_, 0);
}

Sample Sensors::read(const RigState& rig, double time_s, std::uint64_t index) {
    Sample s;
    s.index = index;
    const double jitter = c_.clock_jitter_us > 0 ? c_.clock_jitter_us * clock_rng_.normal() : 0.0;
    auto t_us = static_cast<std::uint64_t>(std::max(0.0, std::llround(time_s * 1e6) + std::round(jitter)));
    if (index > 0 && t_us <= last_time_us_) t_us = last_time_us_ + 1;  // a device clock never runs backwards by jitter
    s.device_time_us = last_time_us_ = t_us;

    const double f = rig.force_N + force_zero_N_ + force_noise_sd_N(c_, rig.force_N) * force_rng_.normal();
    if (std::abs(f) > c_.load_cell_capacity_N) s.force.kind = Reading::over;
    else s.force.counts = std::llround(f / force_scale_N);

    const double x = rig.extension_mm + extension_zero_mm_ + extension_noise_sd_mm(c_, rig.extension_mm) * extension_rng_.normal();
    if (!extensometer_on_) s.extension.kind = Reading::absent;
    else if (std::abs(x) > c_.extensometer_travel_mm) s.extension.kind = Reading::over;
    else s.extension.counts = std::llround(x / extension_scale_mm);

    const double h = rig.crosshead_mm + c_.crosshead_noise_mm * crosshead_rng_.normal();
    s.crosshead.counts = std::llround(h / crosshead_scale_mm);
    return s;
}

}  // namespace tensile::sim
