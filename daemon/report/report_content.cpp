// The words and numbers of a run's record; see report_content.hpp. Layout and
// wording are our own.
#include "report_content.hpp"

#include <cmath>
#include <cstdio>
#include <ctime>

namespace tensile::report {

namespace {

using nlohmann::json;

std::string when(double unix_s) {
    if (!(unix_s > 0)) return "-";
    const std::time_t t = static_cast<std::time_t>(unix_s);
    std::tm tm{};
    gmtime_r(&t, &tm);
    char b[40];
    std::strftime(b, sizeof b, "%Y-%m-%d %H:%M:%S UTC", &tm);
    return b;
}

std::string text_of(const json& v) {
    if (v.is_string()) return v.get<std::string>();
    if (v.is_number()) return report_number(v.get<double>(), 6);
    if (v.is_null()) return "-";
    return v.dump();
}

// Unit of a results key from its suffix (the keys carry their unit).
std::string unit_of(const std::string& key) {
    for (const auto& [suffix, unit] : {std::pair{"_MPa", "MPa"}, {"_N", "N"}, {"_pct", "%"}, {"_mm2", "mm²"}, {"_mm", "mm"}})
        if (key.size() > std::string(suffix).size() && key.ends_with(suffix)) return unit;
    return "";
}

// Standard symbol of a results key; the few keys that are no symbol get words.
std::string symbol_of(const std::string& key) {
    static const std::pair<const char*, const char*> words[] = {
        {"E_r2", "E fit r²"}, {"E_cv_pct", "E slope CV (ASTM E111)"}, {"toe_strain_pct", "toe correction"},
        {"fracture_force_N", "force at fracture"}, {"n_value", "n"}};
    for (const auto& [k, w] : words)
        if (key == k) return w;
    for (const char* suffix : {"_MPa", "_N", "_pct", "_mm2", "_mm"})
        if (key.ends_with(suffix)) return key.substr(0, key.size() - std::string(suffix).size());
    return key;
}

std::string words_of(const char* name) {
    std::string s = name;
    for (char& c : s)
        if (c == '_') c = ' ';
    return s;
}

std::string num(double v, int digits = 4) { return report_number(v, digits); }

struct Builder {
    std::vector<Block>& blocks;
    void heading(std::string t) { blocks.push_back({Block::Kind::heading, {{std::move(t)}}, {}}); }
    void text(Spans s) { blocks.push_back({Block::Kind::text, std::move(s), {}}); }
    void text(std::string t) { text(Spans{{std::move(t)}}); }
    void fine(std::string t) { blocks.push_back({Block::Kind::fine, {{std::move(t)}}, {}}); }
    void table(Table t) { blocks.push_back({Block::Kind::table, {}, std::move(t)}); }
    void pairs(const std::vector<std::pair<std::string, std::string>>& rows) {
        Table t;
        for (const auto& [k, v] : rows) t.rows.push_back({{k}, {v}});
        table(std::move(t));
    }
};

void results_section(Builder& b, const ReportData& d, const UncertaintyInputs& budget) {
    b.heading("Results");
    if (d.results.empty()) {
        b.text("No results stored for this run.");
        return;
    }
    Table t{"results", {"quantity", "value", "unit", "U (k = 2)", "U, %"}, {}};
    for (auto it = d.results.begin(); it != d.results.end(); ++it) {
        const std::string key = it.key();
        if (!it->is_number() && !it->is_null()) continue;  // objects and lists have their own sections
        if (key == "S0_mm2" || key == "L0_mm") continue;  // shown with the specimen
        const auto rel = relative_U_pct(budget_of(key), budget);
        std::string U = "-", Ur = "-";
        if (rel && it->is_number()) {
            U = "± " + num(std::abs(it->get<double>()) * *rel / 100, 3);
            Ur = num(*rel, 3);
        }
        t.rows.push_back({{symbol_of(key)}, {text_of(*it), true}, {unit_of(key)}, {U, true}, {Ur, true}});
    }
    b.table(std::move(t));
    b.fine(budget_note(budget));
    if (d.results.contains("warnings") && !d.results["warnings"].empty()) {
        b.text("Warnings from the analysis:");
        Table w{"warnings", {"warning"}, {}};
        for (const auto& x : d.results["warnings"]) w.rows.push_back({{text_of(x)}});
        b.table(std::move(w));
    }
}

void rate_section(Builder& b, const ReportData& d) {
    b.heading("Strain rate per phase");
    if (!d.results.contains("strain_rate")) {
        b.text("No strain-rate record stored.");
        return;
    }
    Table t{"rates", {"phase", "allowed band, 1/s", "time checked, s", "share inside", "verdict"}, {}};
    int p = 0;
    for (const char* phase : {"elastic", "yielding", "plastic"}) {
        const auto& r = d.results["strain_rate"].value(phase, json::object());
        std::string band = "-";
        if (d.profile) {
            const auto& bd = d.profile->rate_bands[p];
            band = (bd.min_per_s == 0 && bd.max_per_s == 0) ? "not checked" : num(bd.min_per_s, 3) + " – " + num(bd.max_per_s, 3);
        }
        const double checked = r.value("seconds_checked", 0.0), share = r.value("share_inside", 0.0);
        const char* verdict = checked <= 0 ? "no rate known" : share >= 0.95 ? "inside" : share <= 0 ? "outside" : "outside for part of the phase";
        t.rows.push_back({{phase}, {band}, {num(checked, 4), true}, {num(100 * share, 3) + " %", true},
                          {verdict, false, checked > 0 && share < 0.95 ? Tone::bad : Tone::plain}});
        ++p;
    }
    b.table(std::move(t));
    b.fine("Bands from the run's profile; the defaults are ISO 6892-1 Method A ranges with ±20 % (from memory). "
           "'Inside' here means at least 95 % of the checked time, our own summary rule.");
}

}  // namespace

std::string report_number(double v, int digits) {
    if (!std::isfinite(v)) return "-";
    char b[48];
    std::snprintf(b, sizeof b, "%.*g", digits, v);
    return b;
}

ReportContent report_content(const ReportData& d, std::int64_t run, const ReportOptions& options) {
    const auto& s = d.run.summary;
    ReportContent c;
    c.title = "Tensile test record: run " + std::to_string(run);
    c.subtitle = s.material + " · " + storage::name_of(s.state) + " (" + s.state_cause + ")";
    c.short_title = "tensiled run " + std::to_string(run) + " – " + s.material;
    c.curve = d.curve;
    c.marks = d.marks;
    Builder b{c.blocks};

    c.blocks.push_back(
        {Block::Kind::caution,
         {{"Safety and responsibility.", Tone::strong},
          {" This software is no interlock: it never replaces the frame's own limits, guards and emergency stop, and "
           "its messages may arrive late or not at all. A specimen under load stores elastic energy that is released "
           "at fracture; keep guards closed and hands clear. Take a clip-on extensometer off when told, with the frame "
           "held. These results must be checked under the lab's own accredited procedures (ISO/IEC 17025) and the "
           "standard that applies; local codes, the frame maker's instructions and licensed practice come first."}},
         {}});

    b.heading("Specimen");
    std::vector<std::pair<std::string, std::string>> rows;
    for (auto it = d.specimen.begin(); it != d.specimen.end(); ++it)
        if (!(it->is_number() && it->get<double>() == 0)) rows.push_back({it.key(), text_of(*it)});  // zero: not used by this shape
    if (d.results.contains("S0_mm2")) rows.push_back({"S0 used, mm²", text_of(d.results["S0_mm2"])});
    if (d.results.contains("L0_mm")) rows.push_back({"L0 used, mm", text_of(d.results["L0_mm"])});
    b.pairs(rows);

    b.heading("Run");
    b.pairs({{"created", when(s.created_unix_s)},
             {"started", s.started_unix_s ? when(*s.started_unix_s) : "-"},
             {"finished", s.finished_unix_s ? when(*s.finished_unix_s) : "-"},
             {"frames", std::to_string(d.run.frame_count)},
             {"software", d.run.software_version},
             {"SHA-256 of raw bytes and frames", s.digest_sha256.empty() ? "not taken" : s.digest_sha256}});

    b.heading("Profile");
    if (d.profile) {
        std::string proofs, totals;
        for (double x : d.profile->proof_offsets_pct) proofs += (proofs.empty() ? "" : ", ") + ("Rp" + num(x, 3));
        for (double x : d.profile->total_extensions_pct) totals += (totals.empty() ? "" : ", ") + ("Rt" + num(x, 3));
        b.pairs({{"name", d.profile->name},
                 {"proof strengths", proofs.empty() ? "-" : proofs},
                 {"total-extension strengths", totals.empty() ? "-" : totals},
                 {"modulus window", d.profile->modulus_window ? num(d.profile->modulus_window->low_MPa) + " – " +
                                                                    num(d.profile->modulus_window->high_MPa) + " MPa"
                                                              : "found automatically"},
                 {"yield-point rule", "drop ≥ " + num(d.profile->yield_drop_pct, 3) + " % then ≥ " +
                                          num(d.profile->yield_drop_strain_pct, 3) + " % strain below"},
                 {"n-value range", num(d.profile->n_from_pct, 3) + " – " + num(d.profile->n_to_pct, 3) + " %"}});
    } else {
        b.text("The stored profile could not be read.");
    }

    b.heading("Rig");
    if (!d.config_note.empty()) {
        b.text(d.config_note);
    } else {
        b.text(d.rig_name);
        Table t{"sources", {"source", "link", "format", "channels"}, {}};
        for (const auto& src : d.sources) t.rows.push_back({{src.name}, {src.kind}, {src.format}, {src.channels}});
        b.table(std::move(t));
    }
    const auto& bu = options.budget;
    b.text("Instrument classes and tolerances used for the uncertainty: force class " + num(bu.force_class_pct, 3) +
           " (ISO 7500-1), extensometer class " + num(bu.extensometer_class_pct, 3) + " (ISO 9513), S0 ± " +
           num(bu.S0_tolerance_pct, 3) + " %, L0 ± " + num(bu.L0_tolerance_pct, 3) +
           " %, as given for this report; check them against the rig's calibration certificates.");

    results_section(b, d, options.budget);

    b.heading("Stress–strain curve");
    c.blocks.push_back({Block::Kind::curve, {}, {}});

    b.heading("Events");
    Table ev{"events", {"time, s", "event", "stress, MPa", "strain, %", "value"}, {}};
    for (const auto& e : d.run.events)
        ev.rows.push_back({{num(e.time_s, 6), true},
                           {words_of(name_of(e.kind)) + (e.label.empty() ? "" : " · " + e.label)},
                           {num(e.stress_MPa, 5), true},
                           {num(100 * e.strain, 4), true},
                           {num(e.value, 5), true}});
    if (ev.rows.empty()) b.text("No events stored for this run.");
    else b.table(std::move(ev));

    rate_section(b, d);

    b.heading("Verification");
    if (d.verifications.empty()) {
        b.text({{"Not verified yet ("},
                {"tensilectl verify " + std::to_string(run), Tone::code},
                {" re-runs it through today's code)."}});
    } else {
        const auto& v = d.verifications.front();
        const bool passed = v.outcome == "identical" || v.outcome == "within tolerance";
        const std::size_t n = d.verifications.size();
        b.text({{"Latest: "},
                {v.outcome, passed ? Tone::good : Tone::bad},
                {" on " + when(v.unix_s) + " with software " + v.software_version + " (" + std::to_string(n) +
                 " verification" + (n == 1 ? "" : "s") + " on file)."}});
    }

    std::string made = "Made by tensilectl " TENSILED_VERSION;
    if (options.generated_unix_s > 0) made += " on " + when(options.generated_unix_s);
    b.fine(made + ". Standard symbols after ISO 6892-1.");
    return c;
}

}  // namespace tensile::report
