// Specimens and profiles as JSON, both ways: stored with every run so that a
// stored run can be re-analysed later with exactly the settings it ran with.
// Reading refuses missing or mistyped fields with a message naming the field.
#pragma once

#include <nlohmann/json.hpp>

#include "engine/profile.hpp"
#include "engine/result.hpp"
#include "engine/specimen.hpp"

namespace tensile {

nlohmann::json to_json(const Specimen& specimen);
Result<Specimen> specimen_from_json(const nlohmann::json& j);

nlohmann::json to_json(const Profile& profile);
Result<Profile> profile_from_json(const nlohmann::json& j);

}  // namespace tensile
