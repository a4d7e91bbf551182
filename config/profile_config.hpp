// One [profile.<name>] table: analysis settings (engine Profile) and run
// control (preload, settle, stop at fracture, hand-over rule). Our own keys:
//
//   proof_offsets_pct = [0.2]        total_extensions_pct = [0.5]
//   modulus_window_MPa = [40, 160]   (absent: automatic)   modulus_min_r2 = 0.995
//   yield_drop_pct = 0.5  yield_drop_strain_pct = 0.05  yield_max_plastic_pct = 2
//   n_range_pct = [10, 20]
//   break_rate_per_s = 5  break_window_ms = 20  fracture_share = 0.5
//   rate_window_s = 1
//   rate_elastic_per_s = [min, max]  rate_yielding_per_s  rate_plastic_per_s
//   extensometer_range_mm = 0
//   preload_N = 20  settle_s = 2  stop_at_fracture = true  tare_frames = 16
//   [profile.<name>.handover]
//   when = "after-yield" | "at-strain" | "at-travel" | "never"
//   strain_pct = 5 (at-strain)  travel_share = 0.9 (at-travel)  hold = true  relay = false
//
// Throws drivers::ConfigError naming the key and what was expected.
#pragma once

#include <string>

#include <toml++/toml.h>

#include "daemon/run/run_controller.hpp"

namespace tensile {

RunSettings load_profile(const toml::table& table, const std::string& path, const std::string& name);

}  // namespace tensile
