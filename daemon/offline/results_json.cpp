// JSON and text forms of results; see results_json.hpp.
#include "results_json.hpp"

#include <cstdio>

namespace tensile {

namespace {
nlohmann::json opt(const std::optional<double>& v) { return v ? nlohmann::json(*v) : nlohmann::json(nullptr); }

std::string offset_key(const char* symbol, double pct) {
    char buf[48];
    std::snprintf(buf, sizeof buf, "%s%g_MPa", symbol, pct);
    return buf;
}
}  // namespace

nlohmann::json to_json(const Results& r) {
    nlohmann::json j;
    j["S0_mm2"] = r.S0_mm2;
    j["L0_mm"] = r.L0_mm;
    j["E_MPa"] = opt(r.E_MPa);
    j["E_r2"] = opt(r.E_r2);
    j["E_cv_pct"] = opt(r.E_cv_pct);
    j["E_window_MPa"] = r.E_window_low_MPa ? nlohmann::json{*r.E_window_low_MPa, *r.E_window_high_MPa}
                                           : nlohmann::json(nullptr);
    j["toe_strain_pct"] = r.toe_strain ? nlohmann::json(100.0 * *r.toe_strain) : nlohmann::json(nullptr);
    for (const auto& p : r.Rp) j[offset_key("Rp", p.offset_pct)] = opt(p.MPa);
    for (const auto& t : r.Rt) j[offset_key("Rt", t.offset_pct)] = opt(t.MPa);
    j["ReH_MPa"] = opt(r.ReH_MPa);
    j["ReL_MPa"] = opt(r.ReL_MPa);
    j["Ae_pct"] = opt(r.Ae_pct);
    j["Fm_N"] = opt(r.Fm_N);
    j["Rm_MPa"] = opt(r.Rm_MPa);
    j["Ag_pct"] = opt(r.Ag_pct);
    j["Agt_pct"] = opt(r.Agt_pct);
    j["At_pct"] = opt(r.At_pct);
    j["A_pct"] = opt(r.A_pct);
    j["n_value"] = opt(r.n_value);
    j["fracture_force_N"] = opt(r.fracture_force_N);
    j["strain_source"] = {{"Ag", name_of(r.Ag_source)}, {"At", name_of(r.At_source)}};
    nlohmann::json rate = nlohmann::json::object();
    for (int p = 0; p < rate_phase_count; ++p) {
        const auto& c = r.rate[p];
        rate[name_of(static_cast<RatePhase>(p))] = {{"seconds_checked", c.seconds_checked},
                                                    {"share_inside", c.share_inside()}};
    }
    j["strain_rate"] = rate;
    j["warnings"] = r.warnings;
    return j;
}

nlohmann::json to_json(const Event& e) {
    return {{"kind", name_of(e.kind)}, {"label", e.label},           {"time_s", e.time_s}, {"frame", e.frame},
            {"stress_MPa", e.stress_MPa}, {"strain_pct", 100.0 * e.strain}, {"value", e.value}};
}

nlohmann::json to_json(const std::vector<Event>& events) {
    nlohmann::json list = nlohmann::json::array();
    for (const auto& e : events) list.push_back(to_json(e));
    return list;
}

std::string results_text(const Results& r, StressUnit unit) {
    std::string out;
    const auto su = std::string(name_of(unit));
    auto row = [&](const std::string& name, const std::optional<double>& v, const std::string& u, const char* fmt,
                   double scale = 1.0) {
        char buf[128];
        if (v) {
            char num[48];
            std::snprintf(num, sizeof num, fmt, *v * scale);
            std::snprintf(buf, sizeof buf, "  %-8s %14s %s\n", name.c_str(), num, u.c_str());
        } else {
            std::snprintf(buf, sizeof buf, "  %-8s %14s\n", name.c_str(), "-");
        }
        out += buf;
    };
    const double s = per_megapascal(unit);
    const char* sf = unit == StressUnit::psi ? "%.0f" : "%.1f";
    row("S0", r.S0_mm2, "mm²", "%.3f");
    row("L0", r.L0_mm, "mm", "%.2f");
    row("E", r.E_MPa, "GPa", "%.1f", 0.001);
    row("r²", r.E_r2, "", "%.5f");
    for (const auto& p : r.Rp) {
        char name[24];
        std::snprintf(name, sizeof name, "Rp%g", p.offset_pct);
        row(name, p.MPa, su, sf, s);
    }
    for (const auto& t : r.Rt) {
        char name[24];
        std::snprintf(name, sizeof name, "Rt%g", t.offset_pct);
        row(name, t.MPa, su, sf, s);
    }
    if (r.ReH_MPa) {
        row("ReH", r.ReH_MPa, su, sf, s);
        row("ReL", r.ReL_MPa, su, sf, s);
        row("Ae", r.Ae_pct, "%", "%.2f");
    }
    row("Fm", r.Fm_N, "kN", "%.3f", 0.001);
    row("Rm", r.Rm_MPa, su, sf, s);
    row("Ag", r.Ag_pct, r.Ag_source == StrainSource::crosshead ? "% (crosshead)" : "%", "%.2f");
    row("Agt", r.Agt_pct, r.Ag_source == StrainSource::crosshead ? "% (crosshead)" : "%", "%.2f");
    row("At", r.At_pct, r.At_source == StrainSource::crosshead ? "% (crosshead)" : "%", "%.2f");
    row("A", r.A_pct, r.At_source == StrainSource::crosshead ? "% (crosshead)" : "%", "%.2f");
    row("n", r.n_value, "", "%.3f");
    for (int p = 0; p < rate_phase_count; ++p) {
        const auto& c = r.rate[p];
        if (c.seconds_checked <= 0) continue;
        char buf[128];
        std::snprintf(buf, sizeof buf, "  strain rate, %s: %.0f %% of %.1f s inside the band\n",
                      name_of(static_cast<RatePhase>(p)), 100.0 * c.share_inside(), c.seconds_checked);
        out += buf;
    }
    for (const auto& w : r.warnings) out += "  note: " + w + "\n";
    return out;
}

}  // namespace tensile
