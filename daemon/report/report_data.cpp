// Gathering a run's report data from the store; see report_data.hpp.
// Error policy: only an unreadable run record is an error; every other part
// that is missing or unreadable is left empty with a note.
#include "report_data.hpp"

#include <cmath>

#include "config/daemon_config.hpp"
#include "daemon/offline/specimen_json.hpp"
#include "engine/analyzer.hpp"

namespace tensile::report {

namespace {

std::optional<SpecimenGeometry> geometry_of(const nlohmann::json& specimen) {
    if (specimen.contains("S0_mm2") && specimen.contains("L0_mm"))
        return SpecimenGeometry{specimen["S0_mm2"].get<double>(), specimen["L0_mm"].get<double>(),
                                specimen.value("parallel_length_mm", 0.0)};
    auto s = specimen_from_json(specimen);
    if (!s) return std::nullopt;
    auto g = check(*s);
    if (!g) return std::nullopt;
    return *g;
}

void read_rig(ReportData& d) {
    if (d.run.config_snapshot.empty()) {
        d.config_note = "no config stored with the run";
        return;
    }
    try {
        const auto c = load_daemon_config_text(d.run.config_snapshot, "/");
        d.rig_name = c.rig.name;
        for (const auto& s : c.drivers.sources) {
            SourceLine line;
            line.name = s.name;
            line.kind = s.kind == drivers::SourceKind::serial ? "serial" : s.kind == drivers::SourceKind::tcp ? "tcp" : "replay";
            line.format = s.format.format;
            for (const auto& ch : s.format.channels)
                line.channels += (line.channels.empty() ? "" : ", ") + ch.name;
            d.sources.push_back(line);
        }
    } catch (const std::exception& e) {
        d.config_note = std::string("the stored config no longer loads: ") + e.what();
    }
}

void read_verifications(storage::Store& store, std::int64_t run, ReportData& d) {
    auto stmt = store.db().prepare(
        "SELECT unix_s, software_version, outcome FROM verifications WHERE run_id = ? ORDER BY unix_s DESC, id DESC");
    if (!stmt) return;
    stmt->bind(1, run);
    while (true) {
        auto row = stmt->step();
        if (!row || !*row) break;
        d.verifications.push_back({stmt->real(0), stmt->text(1), stmt->text(2)});
    }
}

// The curve the results were computed on: stored frames through the analyzer.
void draw_curve(storage::Store& store, std::int64_t run, ReportData& d) {
    const auto g = geometry_of(d.specimen);
    if (!g || !d.profile) return;
    auto frames = store.load_frames(run);
    if (!frames) return;
    std::optional<double> removed_after;
    for (const auto& e : d.run.events)
        if (e.kind == EventKind::extensometer_lost && e.label == "removed by the operator") removed_after = e.time_s;
    Analyzer analyzer(*g, *d.profile);
    analyzer.reserve(frames->size());
    std::vector<Event> events;
    bool removed = false;
    for (const auto& f : *frames) {
        if (removed_after && !removed && f.time_s > *removed_after) {
            analyzer.note_extensometer_removed(events);
            removed = true;
        }
        analyzer.push(f, events);
    }
    const Results r = analyzer.finish();
    const double toe = r.toe_strain.value_or(0.0);  // event strains are toe-corrected; so is the drawn curve
    const auto& h = analyzer.history();
    d.curve.reserve(h.size());
    for (std::size_t i = 0; i < h.size(); ++i) d.curve.push_back({100 * (h.strain[i] - toe), h.stress_MPa[i]});
    for (const auto& e : d.run.events) {
        if (e.kind == EventKind::rate_out_of_range || e.kind == EventKind::rate_in_range || e.kind == EventKind::modulus) continue;
        const std::string label = e.kind == EventKind::extensometer_lost ? "extensometer off" : e.label.empty() ? name_of(e.kind) : e.label;
        d.marks.push_back({100 * e.strain, e.stress_MPa, label});
    }
}

}  // namespace

Result<ReportData> gather_report_data(storage::Store& store, std::int64_t run) {
    auto rec = store.load_run(run);
    if (!rec) return Error{"run " + std::to_string(run) + ": " + rec.error()};
    ReportData d;
    d.run = std::move(*rec);
    try {
        d.specimen = nlohmann::json::parse(d.run.specimen_json);
        if (d.run.results_json) d.results = nlohmann::json::parse(*d.run.results_json);
        if (auto p = profile_from_json(nlohmann::json::parse(d.run.profile_json))) d.profile = *p;
    } catch (const nlohmann::json::exception& e) {
        return Error{"run " + std::to_string(run) + ": stored specimen, profile or results unreadable: " + e.what()};
    }
    read_rig(d);
    read_verifications(store, run, d);
    draw_curve(store, run, d);
    return d;
}

}  // namespace tensile::report
