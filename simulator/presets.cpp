// Preset lookup; see presets.hpp.
#include "presets.hpp"

#include <filesystem>

namespace tensile::sim {

Result<MaterialFile> resolve_material(const std::string& arg) {
    for (const PresetText& p : preset_texts())
        if (p.name == arg) return parse_material(p.toml, "preset " + std::string(p.name));
    if (std::filesystem::exists(arg)) return load_material_file(arg);
    std::string names;
    for (const PresetText& p : preset_texts()) names += std::string(names.empty() ? "" : ", ") + std::string(p.name);
    return Error{"--material '" + arg + "' is neither a preset nor an existing file; expected a TOML file path or one of: " + names};
}

}  // namespace tensile::sim
