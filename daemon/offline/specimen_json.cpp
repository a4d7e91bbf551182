// JSON forms of specimens and profiles; see specimen_json.hpp.
#include "specimen_json.hpp"

namespace tensile {

namespace {

const char* shape_name(SectionShape s) {
    switch (s) {
        case SectionShape::given_area: return "area";
        case SectionShape::rectangular: return "rectangular";
        case SectionShape::round: return "round";
        case SectionShape::tube: return "tube";
    }
    return "area";
}

// Reads one field; on any problem records the first message.
struct Fields {
    const nlohmann::json& j;
    std::string error;
    template <class T>
    void get(const char* key, T& out, bool required = false) {
        if (!error.empty()) return;
        auto it = j.find(key);
        if (it == j.end() || it->is_null()) {
            if (required) error = std::string("missing field '") + key + "'";
            return;
        }
        try {
            out = it->get<T>();
        } catch (const nlohmann::json::exception&) {
            error = std::string("field '") + key + "' has the wrong type";
        }
    }
};

}  // namespace

nlohmann::json to_json(const Specimen& s) {
    return {{"label", s.label},
            {"material", s.material},
            {"shape", shape_name(s.shape)},
            {"width_mm", s.width_mm},
            {"thickness_mm", s.thickness_mm},
            {"diameter_mm", s.diameter_mm},
            {"wall_mm", s.wall_mm},
            {"area_mm2", s.area_mm2},
            {"gauge_length_mm", s.gauge_length_mm},
            {"proportional_factor", s.proportional_factor},
            {"parallel_length_mm", s.parallel_length_mm}};
}

Result<Specimen> specimen_from_json(const nlohmann::json& j) {
    if (!j.is_object()) return Error{"specimen: expected a JSON object"};
    Specimen s;
    Fields f{j, {}};
    std::string shape = "area";
    f.get("label", s.label);
    f.get("material", s.material);
    f.get("shape", shape);
    f.get("width_mm", s.width_mm);
    f.get("thickness_mm", s.thickness_mm);
    f.get("diameter_mm", s.diameter_mm);
    f.get("wall_mm", s.wall_mm);
    f.get("area_mm2", s.area_mm2);
    f.get("gauge_length_mm", s.gauge_length_mm);
    f.get("proportional_factor", s.proportional_factor);
    f.get("parallel_length_mm", s.parallel_length_mm);
    if (!f.error.empty()) return Error{"specimen: " + f.error};
    if (shape == "area") s.shape = SectionShape::given_area;
    else if (shape == "rectangular") s.shape = SectionShape::rectangular;
    else if (shape == "round") s.shape = SectionShape::round;
    else if (shape == "tube") s.shape = SectionShape::tube;
    else return Error{"specimen: shape '" + shape + "'; expected area, rectangular, round or tube"};
    return s;
}

nlohmann::json to_json(const Profile& p) {
    nlohmann::json bands = nlohmann::json::array();
    for (const auto& b : p.rate_bands) bands.push_back({b.min_per_s, b.max_per_s});
    return {{"name", p.name},
            {"proof_offsets_pct", p.proof_offsets_pct},
            {"total_extensions_pct", p.total_extensions_pct},
            {"modulus_window_MPa",
             p.modulus_window ? nlohmann::json{p.modulus_window->low_MPa, p.modulus_window->high_MPa} : nlohmann::json()},
            {"modulus_min_r2", p.modulus_min_r2},
            {"modulus_window_share", p.modulus_window_share},
            {"modulus_slope_tolerance", p.modulus_slope_tolerance},
            {"yield_drop_pct", p.yield_drop_pct},
            {"yield_drop_strain_pct", p.yield_drop_strain_pct},
            {"yield_max_plastic_pct", p.yield_max_plastic_pct},
            {"n_from_pct", p.n_from_pct},
            {"n_to_pct", p.n_to_pct},
            {"break_rate_per_s", p.break_rate_per_s},
            {"break_window_s", p.break_window_s},
            {"fracture_share", p.fracture_share},
            {"rate_window_s", p.rate_window_s},
            {"rate_bands_per_s", bands},
            {"extensometer_range_mm", p.extensometer_range_mm},
            {"extensometer_jump_share", p.extensometer_jump_share}};
}

Result<Profile> profile_from_json(const nlohmann::json& j) {
    if (!j.is_object()) return Error{"profile: expected a JSON object"};
    Profile p;
    Fields f{j, {}};
    f.get("name", p.name);
    f.get("proof_offsets_pct", p.proof_offsets_pct);
    f.get("total_extensions_pct", p.total_extensions_pct);
    std::vector<double> window;
    f.get("modulus_window_MPa", window);
    f.get("modulus_min_r2", p.modulus_min_r2);
    f.get("modulus_window_share", p.modulus_window_share);
    f.get("modulus_slope_tolerance", p.modulus_slope_tolerance);
    f.get("yield_drop_pct", p.yield_drop_pct);
    f.get("yield_drop_strain_pct", p.yield_drop_strain_pct);
    f.get("yield_max_plastic_pct", p.yield_max_plastic_pct);
    f.get("n_from_pct", p.n_from_pct);
    f.get("n_to_pct", p.n_to_pct);
    f.get("break_rate_per_s", p.break_rate_per_s);
    f.get("break_window_s", p.break_window_s);
    f.get("fracture_share", p.fracture_share);
    f.get("rate_window_s", p.rate_window_s);
    std::vector<std::vector<double>> bands;
    f.get("rate_bands_per_s", bands);
    f.get("extensometer_range_mm", p.extensometer_range_mm);
    f.get("extensometer_jump_share", p.extensometer_jump_share);
    if (!f.error.empty()) return Error{"profile: " + f.error};
    if (window.size() == 2) p.modulus_window = StressWindow{window[0], window[1]};
    else if (!window.empty()) return Error{"profile: field 'modulus_window_MPa' must be [low, high]"};
    if (!bands.empty()) {
        if (bands.size() != rate_phase_count) return Error{"profile: field 'rate_bands_per_s' must hold 3 bands"};
        for (int k = 0; k < rate_phase_count; ++k) {
            if (bands[k].size() != 2) return Error{"profile: each rate band must be [min, max]"};
            p.rate_bands[k] = {bands[k][0], bands[k][1]};
        }
    }
    return p;
}

}  // namespace tensile
