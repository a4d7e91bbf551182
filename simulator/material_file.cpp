// TOML material loader; see material_file.hpp. Each table's keys are checked
// against a list of the keys it may hold; each number against its meaning.
#include "material_file.hpp"

#include <fstream>
#include <initializer_list>
#include <sstream>

#include <toml++/toml.h>

namespace tensile::sim {

namespace {

struct Reader {
    std::string source;
    std::string error;

    bool fail(const std::string& msg) {
        if (error.empty()) error = source + ": " + msg;
        return false;
    }

    bool only_keys(const toml::table& t, const std::string& where, std::initializer_list<const char*> keys) {
        for (auto&& [k, v] : t) {
            bool known = false;
            for (const char* name : keys) known = known || k.str() == name;
            if (!known) {
                std::string list;
                for (const char* name : keys) list += std::string(list.empty() ? "" : ", ") + name;
                return fail("unknown key '" + std::string(k.str()) + "' in " + where + "; expected one of: " + list);
            }
        }
        return true;
    }

    bool number(const toml::table& t, const std::string& where, const char* key, double& out, bool required) {
        const toml::node* n = t.get(key);
        if (!n) return required ? fail("missing key '" + std::string(key) + "' in " + where) : true;
        const auto v = n->value<double>();
        if (!v) return fail("key '" + std::string(key) + "' in " + where + " must be a number");
        out = *v;
        return true;
    }

    bool text(const toml::table& t, const std::string& where, const char* key, std::string& out, bool required) {
        const toml::node* n = t.get(key);
        if (!n) return required ? fail("missing key '" + std::string(key) + "' in " + where) : true;
        const auto v = n->value<std::string>();
        if (!v) return fail("key '" + std::string(key) + "' in " + where + " must be a string");
        out = *v;
        return true;
    }

    const toml::table* table(const toml::table& root, const char* key, bool required) {
        const toml::node* n = root.get(key);
        if (!n) {
            if (required) fail("missing table [" + std::string(key) + "]");
            return nullptr;
        }
        if (!n->is_table()) {
            fail("'" + std::string(key) + "' must be a table [" + key + "]");
            return nullptr;
        }
        return n->as_table();
    }
};

bool read_hardening(Reader& r, const toml::table& t, MaterialSpec& m) {
    std::string law;
    if (!r.text(t, "[hardening]", "law", law, true)) return false;
    if (law == "hill") {
        m.law = HardeningLaw::hill;
        return r.only_keys(t, "[hardening] with law = \"hill\"", {"law", "sigma02_MPa", "n"}) &&
               r.number(t, "[hardening]", "sigma02_MPa", m.hill_sigma02_MPa, true) &&
               r.number(t, "[hardening]", "n", m.hill_n, true);
    }
    if (law == "hollomon") {
        m.law = HardeningLaw::hollomon;
        return r.only_keys(t, "[hardening] with law = \"hollomon\"", {"law", "K_MPa", "n"}) &&
               r.number(t, "[hardening]", "K_MPa", m.hollomon_K_MPa, true) &&
               r.number(t, "[hardening]", "n", m.hollomon_n, true);
    }
    if (law == "voce") {
        m.law = HardeningLaw::voce;
        return r.only_keys(t, "[hardening] with law = \"voce\"", {"law", "sigma0_MPa", "Q_MPa", "b"}) &&
               r.number(t, "[hardening]", "sigma0_MPa", m.voce_sigma0_MPa, true) &&
               r.number(t, "[hardening]", "Q_MPa", m.voce_Q_MPa, true) &&
               r.number(t, "[hardening]", "b", m.voce_b, true);
    }
    return r.fail("key 'law' in [hardening] must be \"hill\", \"hollomon\" or \"voce\", got \"" + law + "\"");
}

bool read_specimen(Reader& r, const toml::table& t, Specimen& s) {
    const std::string w = "[specimen]";
    std::string shape;
    if (!r.only_keys(t, w, {"shape", "width_mm", "thickness_mm", "diameter_mm", "wall_mm", "area_mm2",
                            "gauge_length_mm", "proportional_factor", "parallel_length_mm"}) ||
        !r.text(t, w, "shape", shape, true))
        return false;
    bool ok = true;
    if (shape == "rectangular") {
        s.shape = SectionShape::rectangular;
        ok = r.number(t, w, "width_mm", s.width_mm, true) && r.number(t, w, "thickness_mm", s.thickness_mm, true);
    } else if (shape == "round") {
        s.shape = SectionShape::round;
        ok = r.number(t, w, "diameter_mm", s.diameter_mm, true);
    } else if (shape == "tube") {
        s.shape = SectionShape::tube;
        ok = r.number(t, w, "diameter_mm", s.diameter_mm, true) && r.number(t, w, "wall_mm", s.wall_mm, true);
    } else if (shape == "area") {
        s.shape = SectionShape::given_area;
        ok = r.number(t, w, "area_mm2", s.area_mm2, true);
    } else {
        return r.fail("key 'shape' in [specimen] must be \"rectangular\", \"round\", \"tube\" or \"area\", got \"" + shape + "\"");
    }
    if (!ok) return false;
    const bool has_l0 = t.contains("gauge_length_mm");
    const bool has_k = t.contains("proportional_factor");
    if (has_l0 == has_k) return r.fail("[specimen] needs exactly one of 'gauge_length_mm' or 'proportional_factor'");
    return r.number(t, w, "gauge_length_mm", s.gauge_length_mm, false) &&
           r.number(t, w, "proportional_factor", s.proportional_factor, false) &&
           r.number(t, w, "parallel_length_mm", s.parallel_length_mm, true);
}

}  // namespace

Result<MaterialFile> parse_material(std::string_view text, std::string_view source) {
    Reader r{std::string(source), {}};
    toml::table root;
    try {
        root = toml::parse(text, source);
    } catch (const toml::parse_error& e) {
        std::ostringstream msg;
        msg << source << ":" << e.source().begin.line << ":" << e.source().begin.column
            << ": not valid TOML: " << e.description();
        return Error{msg.str()};
    }
    MaterialFile f;
    MaterialSpec& m = f.material;
    if (!r.only_keys(root, "the top level", {"name", "description", "elastic", "hardening", "yield_point", "fracture", "specimen"}) ||
        !r.text(root, "the top level", "name", m.name, true) ||
        !r.text(root, "the top level", "description", m.description, false))
        return Error{r.error};
    const toml::table* elastic = r.table(root, "elastic", true);
    const toml::table* hardening = r.table(root, "hardening", true);
    const toml::table* yield = r.table(root, "yield_point", false);
    const toml::table* fracture = r.table(root, "fracture", true);
    const toml::table* specimen = r.table(root, "specimen", true);
    if (!r.error.empty()) return Error{r.error};

    bool ok = r.only_keys(*elastic, "[elastic]", {"E_MPa"}) && r.number(*elastic, "[elastic]", "E_MPa", m.E_MPa, true) &&
              read_hardening(r, *hardening, m);
    if (ok && yield) {
        YieldPoint y;
        ok = r.only_keys(*yield, "[yield_point]", {"ReH_MPa", "ReL_MPa", "Ae_pct", "drop_strain", "serration_share", "serration_strain"}) &&
             r.number(*yield, "[yield_point]", "ReH_MPa", y.ReH_MPa, true) &&
             r.number(*yield, "[yield_point]", "ReL_MPa", y.ReL_MPa, true) &&
             r.number(*yield, "[yield_point]", "Ae_pct", y.Ae_pct, true) &&
             r.number(*yield, "[yield_point]", "drop_strain", y.drop_strain, false) &&
             r.number(*yield, "[yield_point]", "serration_share", y.serration_share, false) &&
             r.number(*yield, "[yield_point]", "serration_strain", y.serration_strain, false);
        m.yield_point = y;
    }
    ok = ok && r.only_keys(*fracture, "[fracture]", {"A_pct", "neck_softening", "neck_exponent"}) &&
         r.number(*fracture, "[fracture]", "A_pct", m.A_pct, true) &&
         r.number(*fracture, "[fracture]", "neck_softening", m.neck_softening, false) &&
         r.number(*fracture, "[fracture]", "neck_exponent", m.neck_exponent, false) &&
         read_specimen(r, *specimen, f.specimen);
    if (!ok) return Error{r.error};
    f.specimen.material = m.name;
    f.specimen.label = m.name;
    return f;
}

Result<MaterialFile> load_material_file(const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    if (!in) return Error{"cannot open material file '" + path + "'; expected a readable TOML file"};
    std::ostringstream all;
    all << in.rdbuf();
    return parse_material(all.str(), path);
}

}  // namespace tensile::sim
