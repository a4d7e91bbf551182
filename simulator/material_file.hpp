// Material files: TOML with our own keys describing one lot of material and
// the specimen cut from it (see materials/*.toml for the layout). Parsing
// never throws: a bad file gives an Error naming the file, the key and what was
// expected; unknown keys are refused so a typo can't silently fall back to a
// default.
#pragma once

#include <string>
#include <string_view>

#include "engine/result.hpp"
#include "engine/specimen.hpp"
#include "material.hpp"

namespace tensile::sim {

struct MaterialFile {
    MaterialSpec material;
    Specimen specimen;
};

// `source` names the text in messages (a path, or "preset NAME").
Result<MaterialFile> parse_material(std::string_view toml_text, std::string_view source);
Result<MaterialFile> load_material_file(const std::string& path);

}  // namespace tensile::sim
