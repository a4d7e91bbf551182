// The per-run HTML report; see run_report.hpp. Layout and wording are our own.
#include "run_report.hpp"

#include <cmath>
#include <cstdio>
#include <ctime>
#include <sstream>

#include "report_data.hpp"

namespace tensile::report {

namespace {

using nlohmann::json;

std::string num(double v, int digits = 4) {
    if (!std::isfinite(v)) return "-";
    char b[48];
    std::snprintf(b, sizeof b, "%.*g", digits, v);
    return b;
}

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
    if (v.is_number()) return num(v.get<double>(), 6);
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

const char* style = R"css(
body{font-family:system-ui,sans-serif;margin:24px auto;max-width:900px;color:#222;line-height:1.4}
h1{font-size:1.5em;margin-bottom:0}h2{font-size:1.1em;border-bottom:1px solid #bbb;margin-top:1.6em}
table{border-collapse:collapse;margin:6px 0}td,th{padding:3px 10px;border-bottom:1px solid #e2e2e2;text-align:left}
td.n{text-align:right;font-variant-numeric:tabular-nums}.sub{color:#555}
.caution{border:2px solid #9a6b00;background:#fff8e6;padding:8px 14px;margin:14px 0}
.fine{font-size:.85em;color:#444}.bad{color:#a31515;font-weight:bold}.good{color:#1d6b2a;font-weight:bold}
@media print{.caution{break-inside:avoid}svg{max-width:100%}}
)css";

void kv_table(std::ostringstream& o, const std::vector<std::pair<std::string, std::string>>& rows) {
    o << "<table>\n";
    for (const auto& [k, v] : rows) o << "<tr><th>" << escape_xml(k) << "</th><td>" << escape_xml(v) << "</td></tr>\n";
    o << "</table>\n";
}

void results_section(std::ostringstream& o, const ReportData& d, const UncertaintyInputs& budget) {
    o << "<h2>Results</h2>\n";
    if (d.results.empty()) {
        o << "<p>No results stored for this run.</p>\n";
        return;
    }
    o << "<table class=\"results\">\n<tr><th>quantity</th><th>value</th><th>unit</th><th>U (k = 2)</th><th>U, %</th></tr>\n";
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
        o << "<tr><td>" << escape_xml(symbol_of(key)) << "</td><td class=\"n\">" << escape_xml(text_of(*it))
          << "</td><td>" << escape_xml(unit_of(key)) << "</td><td class=\"n\">" << U << "</td><td class=\"n\">" << Ur
          << "</td></tr>\n";
    }
    o << "</table>\n<p class=\"fine\">" << escape_xml(budget_note(budget)) << "</p>\n";
    if (d.results.contains("warnings") && !d.results["warnings"].empty()) {
        o << "<p>Warnings from the analysis:</p><ul>\n";
        for (const auto& w : d.results["warnings"]) o << "<li>" << escape_xml(text_of(w)) << "</li>\n";
        o << "</ul>\n";
    }
}

void rate_section(std::ostringstream& o, const ReportData& d) {
    o << "<h2>Strain rate per phase</h2>\n";
    if (!d.results.contains("strain_rate")) {
        o << "<p>No strain-rate record stored.</p>\n";
        return;
    }
    o << "<table class=\"rates\">\n<tr><th>phase</th><th>allowed band, 1/s</th><th>time checked, s</th><th>share inside</th><th></th></tr>\n";
    int p = 0;
    for (const char* phase : {"elastic", "yielding", "plastic"}) {
        const auto& r = d.results["strain_rate"].value(phase, json::object());
        std::string band = "-";
        if (d.profile) {
            const auto& b = d.profile->rate_bands[p];
            band = (b.min_per_s == 0 && b.max_per_s == 0) ? "not checked" : num(b.min_per_s, 3) + " – " + num(b.max_per_s, 3);
        }
        const double checked = r.value("seconds_checked", 0.0), share = r.value("share_inside", 0.0);
        const char* verdict = checked <= 0 ? "no rate known" : share >= 0.95 ? "inside" : share <= 0 ? "outside" : "outside for part of the phase";
        o << "<tr><td>" << phase << "</td><td>" << band << "</td><td class=\"n\">" << num(checked, 4) << "</td><td class=\"n\">"
          << num(100 * share, 3) << " %</td><td class=\"" << (checked > 0 && share < 0.95 ? "bad" : "") << "\">" << verdict
          << "</td></tr>\n";
        ++p;
    }
    o << "</table>\n<p class=\"fine\">Bands from the run's profile; the defaults are ISO 6892-1 Method A ranges with ±20 % "
         "(from memory). 'Inside' here means at least 95 % of the checked time, our own summary rule.</p>\n";
}

}  // namespace

Result<std::string> html_report(storage::Store& store, std::int64_t run, const ReportOptions& options) {
    auto data = gather_report_data(store, run);
    if (!data) return Error{data.error()};
    const ReportData& d = *data;
    const auto& s = d.run.summary;
    std::ostringstream o;
    o << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>tensiled run " << run << " – "
      << escape_xml(s.material) << "</title>\n<style>" << style << "</style>\n</head>\n<body>\n"
      << "<h1>Tensile test record: run " << run << "</h1>\n<p class=\"sub\">" << escape_xml(s.material) << " · "
      << storage::name_of(s.state) << " (" << escape_xml(s.state_cause) << ")</p>\n";

    o << "<div class=\"caution\"><strong>Safety and responsibility.</strong> This software is no interlock: it never "
         "replaces the frame's own limits, guards and emergency stop, and its messages may arrive late or not at all. "
         "A specimen under load stores elastic energy that is released at fracture; keep guards closed and hands clear. "
         "Take a clip-on extensometer off when told, with the frame held. These results must be checked under the lab's "
         "own accredited procedures (ISO/IEC 17025) and the standard that applies; local codes, the frame maker's "
         "instructions and licensed practice come first.</div>\n";

    o << "<h2>Specimen</h2>\n";
    std::vector<std::pair<std::string, std::string>> rows;
    for (auto it = d.specimen.begin(); it != d.specimen.end(); ++it)
        if (!(it->is_number() && it->get<double>() == 0)) rows.push_back({it.key(), text_of(*it)});  // zero: not used by this shape
    if (d.results.contains("S0_mm2")) rows.push_back({"S0 used, mm²", text_of(d.results["S0_mm2"])});
    if (d.results.contains("L0_mm")) rows.push_back({"L0 used, mm", text_of(d.results["L0_mm"])});
    kv_table(o, rows);

    o << "<h2>Run</h2>\n";
    kv_table(o, {{"created", when(s.created_unix_s)},
                 {"started", s.started_unix_s ? when(*s.started_unix_s) : "-"},
                 {"finished", s.finished_unix_s ? when(*s.finished_unix_s) : "-"},
                 {"frames", std::to_string(d.run.frame_count)},
                 {"software", d.run.software_version},
                 {"SHA-256 of raw bytes and frames", s.digest_sha256.empty() ? "not taken" : s.digest_sha256}});

    o << "<h2>Profile</h2>\n";
    if (d.profile) {
        std::string proofs, totals;
        for (double x : d.profile->proof_offsets_pct) proofs += (proofs.empty() ? "" : ", ") + ("Rp" + num(x, 3));
        for (double x : d.profile->total_extensions_pct) totals += (totals.empty() ? "" : ", ") + ("Rt" + num(x, 3));
        kv_table(o, {{"name", d.profile->name},
                     {"proof strengths", proofs.empty() ? "-" : proofs},
                     {"total-extension strengths", totals.empty() ? "-" : totals},
                     {"modulus window", d.profile->modulus_window ? num(d.profile->modulus_window->low_MPa) + " – " +
                                                                        num(d.profile->modulus_window->high_MPa) + " MPa"
                                                                  : "found automatically"},
                     {"yield-point rule", "drop ≥ " + num(d.profile->yield_drop_pct, 3) + " % then ≥ " +
                                              num(d.profile->yield_drop_strain_pct, 3) + " % strain below"},
                     {"n-value range", num(d.profile->n_from_pct, 3) + " – " + num(d.profile->n_to_pct, 3) + " %"}});
    } else {
        o << "<p>The stored profile could not be read.</p>\n";
    }

    o << "<h2>Rig</h2>\n";
    if (!d.config_note.empty()) o << "<p>" << escape_xml(d.config_note) << "</p>\n";
    else {
        o << "<p>" << escape_xml(d.rig_name) << "</p>\n<table>\n<tr><th>source</th><th>link</th><th>format</th><th>channels</th></tr>\n";
        for (const auto& src : d.sources)
            o << "<tr><td>" << escape_xml(src.name) << "</td><td>" << src.kind << "</td><td>" << escape_xml(src.format)
              << "</td><td>" << escape_xml(src.channels) << "</td></tr>\n";
        o << "</table>\n";
    }
    const auto& b = options.budget;
    o << "<p>Instrument classes and tolerances used for the uncertainty: force class " << num(b.force_class_pct, 3)
      << " (ISO 7500-1), extensometer class " << num(b.extensometer_class_pct, 3) << " (ISO 9513), S0 ± "
      << num(b.S0_tolerance_pct, 3) << " %, L0 ± " << num(b.L0_tolerance_pct, 3)
      << " %, as given for this report; check them against the rig's calibration certificates.</p>\n";

    results_section(o, d, options.budget);

    o << "<h2>Stress–strain curve</h2>\n" << svg_curve(d.curve, d.marks);

    o << "<h2>Events</h2>\n<table class=\"events\">\n<tr><th>time, s</th><th>event</th><th>stress, MPa</th><th>strain, %</th><th>value</th></tr>\n";
    for (const auto& e : d.run.events)
        o << "<tr><td class=\"n\">" << num(e.time_s, 6) << "</td><td>" << words_of(name_of(e.kind))
          << (e.label.empty() ? "" : " · " + escape_xml(e.label)) << "</td><td class=\"n\">" << num(e.stress_MPa, 5)
          << "</td><td class=\"n\">" << num(100 * e.strain, 4) << "</td><td class=\"n\">" << num(e.value, 5) << "</td></tr>\n";
    o << "</table>\n";

    rate_section(o, d);

    o << "<h2>Verification</h2>\n";
    if (d.verifications.empty()) {
        o << "<p>Not verified yet (<code>tensilectl verify " << run << "</code> re-runs it through today's code).</p>\n";
    } else {
        const auto& v = d.verifications.front();
        const bool passed = v.outcome == "identical" || v.outcome == "within tolerance";
        o << "<p>Latest: <span class=\"" << (passed ? "good" : "bad") << "\">" << escape_xml(v.outcome) << "</span> on "
          << when(v.unix_s) << " with software " << escape_xml(v.software_version) << " (" << d.verifications.size()
          << " verification" << (d.verifications.size() == 1 ? "" : "s") << " on file).</p>\n";
    }

    o << "<p class=\"fine\">Made by tensilectl " << TENSILED_VERSION;
    if (options.generated_unix_s > 0) o << " on " << when(options.generated_unix_s);
    o << ". Standard symbols after ISO 6892-1.</p>\n</body>\n</html>\n";
    return o.str();
}

}  // namespace tensile::report
