// Results and events as JSON and as a plain-text table. The JSON keys are the
// standard symbols with their unit (E_MPa, Rp0.2_MPa, Fm_N, Ag_pct...), the
// same keys the simulator's ground truth uses, so the two compare directly. A
// value the run did not determine is null, never a guess.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "engine/event.hpp"
#include "engine/results.hpp"
#include "engine/units.hpp"

namespace tensile {

nlohmann::json to_json(const Results& results);
nlohmann::json to_json(const Event& event);
nlohmann::json to_json(const std::vector<Event>& events);

// A table for people: quantity, value, unit; stresses in `stress_unit`.
std::string results_text(const Results& results, StressUnit stress_unit = StressUnit::megapascal);

}  // namespace tensile
