// Truth JSON; see truth_json.hpp.
#include "truth_json.hpp"

namespace tensile::sim {

nlohmann::ordered_json truth_json(const MaterialTruth& t, const RunRecord& r) {
    nlohmann::ordered_json j;
    j["material"] = r.material;
    j["description"] = r.description;
    j["S0_mm2"] = t.S0_mm2;
    j["L0_mm"] = t.L0_mm;
    j["E_MPa"] = t.E_MPa;
    if (t.Rp02_MPa) j["Rp0.2_MPa"] = *t.Rp02_MPa;
    if (t.ReH_MPa) j["ReH_MPa"] = *t.ReH_MPa;
    if (t.ReL_MPa) j["ReL_MPa"] = *t.ReL_MPa;
    if (t.Ae_pct) j["Ae_pct"] = *t.Ae_pct;
    j["Fm_N"] = t.Fm_N;
    j["Rm_MPa"] = t.Rm_MPa;
    j["Ag_pct"] = t.Ag_pct;
    j["Agt_pct"] = t.Agt_pct;
    j["At_pct"] = t.At_pct;
    j["A_pct"] = t.A_pct;
    if (t.n_value) j["n_value"] = *t.n_value;

    auto& times = j["times"];
    times = nlohmann::ordered_json::object();
    for (const Mark& m : r.marks)
        if (m.time_s) times[m.name] = *m.time_s;
    if (r.fracture_s) times["fracture_s"] = *r.fracture_s;
    if (r.extensometer_off_s) times["extensometer_off_s"] = *r.extensometer_off_s;
    times["end_s"] = r.end_s;

    auto& faults = j["faults"];
    faults = nlohmann::ordered_json::array();
    for (std::size_t i = 0; i < r.faults.size(); ++i) {
        const Fault& f = r.faults[i];
        nlohmann::ordered_json e;
        if (i < r.fault_links.size()) e["link"] = r.fault_links[i];
        e["kind"] = name_of(f.kind);
        e["spec"] = f.spec;
        e["start_s"] = f.start_s;
        e["duration_s"] = f.duration_s;
        if (f.kind == FaultKind::nan || f.kind == FaultKind::over || f.kind == FaultKind::sensor_stop) e["channel"] = name_of(f.channel);
        if (f.kind == FaultKind::clock_jump) e["jump_s"] = f.amount;
        if (f.kind == FaultKind::garbage) e["bytes"] = f.bytes_injected;
        else e["records"] = f.records_affected;
        if (f.kind == FaultKind::torn) {
            e["runs"] = f.torn_runs;
            e["fragment_bytes"] = f.fragment_bytes;
            e["glued_bytes"] = f.glued_bytes;
        }
        faults.push_back(std::move(e));
    }
    auto& commands = j["commands"];
    commands = nlohmann::ordered_json::array();
    for (const CommandLog& c : r.commands)
        commands.push_back({{"time_s", c.time_s}, {"line", c.line}, {"answer", c.answer}, {"from", c.from}});

    j["run"] = {{"seed", r.seed}, {"format", r.format}, {"rate_hz", r.rate_hz}, {"samples", r.samples}};
    if (!r.links.empty()) {
        auto& links = j["links"];
        links = nlohmann::ordered_json::array();
        for (const LinkRecord& l : r.links)
            links.push_back({{"channels", l.channels}, {"target", l.target}, {"rate_hz", l.rate_hz},
                             {"clock_offset_s", l.clock_offset_s}, {"clock_drift_ppm", l.clock_drift_ppm},
                             {"samples", l.samples}, {"bytes", l.bytes}});
    }
    return j;
}

}  // namespace tensile::sim
