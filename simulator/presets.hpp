// Built-in material presets (the TOML files of simulator/materials, embedded
// at build time) and the lookup that turns a --material argument into a
// material: a preset name or a path to a TOML file. Errors name what was given
// and list what would have been accepted.
#pragma once

#include <span>
#include <string>
#include <string_view>

#include "material_file.hpp"

namespace tensile::sim {

struct PresetText {
    std::string_view name;  // file stem, e.g. "harbourline-s355-lot7"
    std::string_view toml;
};

std::span<const PresetText> preset_texts();

// A preset by name, or else a material file by path.
Result<MaterialFile> resolve_material(const std::string& name_or_path);

}  // namespace tensile::sim
