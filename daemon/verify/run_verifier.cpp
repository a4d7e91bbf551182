// Verification of stored runs; see run_verifier.hpp.
#include "run_verifier.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <map>

#include <nlohmann/json.hpp>

#include "config/daemon_config.hpp"
#include "daemon/offline/results_json.hpp"
#include "daemon/offline/specimen_json.hpp"
#include "daemon/tensiled/frame_pipeline.hpp"
#include "engine/analyzer.hpp"

namespace tensile {

namespace {

using nlohmann::json;

bool same(double a, double b, double tol) {
    if (std::isnan(a) && std::isnan(b)) return true;
    if (a == b) return true;
    return tol > 0 && std::abs(a - b) <= tol * std::max(std::abs(a), std::abs(b));
}

// Numbers of a results object flattened to "key" / "key.sub" paths.
void flatten(const json& j, const std::string& prefix, std::map<std::string, std::optional<double>>& out) {
    for (auto it = j.begin(); it != j.end(); ++it) {
        const std::string key = prefix.empty() ? it.key() : prefix + "." + it.key();
        if (it->is_number()) out[key] = it->get<double>();
        else if (it->is_null()) out[key] = std::nullopt;
        else if (it->is_object()) flatten(*it, key, out);
        else if (it->is_array() && !it->empty() && (*it)[0].is_number())
            for (std::size_t k = 0; k < it->size(); ++k) out[key + "[" + std::to_string(k) + "]"] = (*it)[k].get<double>();
    }
}

struct Recomputed {
    std::vector<Event> events;
    Results results;
};

// The engine over frames, with the hand-over applied after the frame it
// followed in the live run.
Recomputed analyse(const std::vector<Frame>& frames, SpecimenGeometry geometry, const Profile& profile,
                   std::optional<double> removed_after_s) {
    Analyzer analyzer(geometry, profile);
    Recomputed r;
    bool removed = false;
    for (const auto& f : frames) {
        if (removed_after_s && !removed && f.time_s > *removed_after_s) {
            analyzer.note_extensometer_removed(r.events);
            removed = true;
        }
        analyzer.push(f, r.events);
    }
    r.results = analyzer.finish();
    return r;
}

void compare_results(const json& stored, const Results& now, double tol, const char* prefix,
                     std::vector<VerifyRow>& rows) {
    std::map<std::string, std::optional<double>> a, b;
    flatten(stored, "", a);
    flatten(to_json(now), "", b);
    for (const auto& [key, value] : a) {
        const auto it = b.find(key);
        VerifyRow row{std::string(prefix) + key, value, it == b.end() ? std::nullopt : it->second, true};
        row.ok = row.stored.has_value() == row.now.has_value() && (!row.stored || same(*row.stored, *row.now, tol));
        rows.push_back(row);
    }
    const bool warnings_same = stored.value("warnings", json::array()) == to_json(now)["warnings"];
    rows.push_back({std::string(prefix) + "warnings", std::nullopt, std::nullopt, warnings_same});
}

void compare_events(const std::vector<Event>& stored, const std::vector<Event>& now, double tol,
                    std::vector<VerifyRow>& rows) {
    rows.push_back({"events (count)", static_cast<double>(stored.size()), static_cast<double>(now.size()),
                    stored.size() == now.size()});
    for (std::size_t k = 0; k < std::min(stored.size(), now.size()); ++k) {
        const auto& s = stored[k];
        const auto& n = now[k];
        const std::string name = "event " + std::to_string(k + 1) + " " + name_of(s.kind) +
                                 (s.label.empty() ? "" : " " + s.label);
        const bool ok = s.kind == n.kind && same(s.time_s, n.time_s, tol) && same(s.stress_MPa, n.stress_MPa, tol) &&
                        same(s.strain, n.strain, tol) && same(s.value, n.value, tol);
        rows.push_back({name + (s.kind == n.kind ? "" : " (now " + std::string(name_of(n.kind)) + ")"), s.stress_MPa,
                        n.stress_MPa, ok});
    }
}

// Frames rebuilt from the stored raw bytes as the live run made them.
std::optional<std::vector<Frame>> reparse(storage::Store& store, std::int64_t run, const storage::RunRecord& rec,
                                          std::vector<std::string>& notes) {
    if (rec.config_snapshot.empty()) return std::nullopt;
    auto counters = store.load_counters(run);
    if (!counters) return std::nullopt;
    std::map<std::string, double> c;
    for (const auto& r : *counters)
        if (r.source == "run") c[r.name] = r.value;
    if (!c.count("armed_at_s")) {
        notes.push_back("raw bytes: no arming time stored with the run; frames checked only");
        return std::nullopt;
    }
    struct Piece {
        double arrival;
        int source;
        std::string bytes;
    };
    std::vector<Piece> pieces;
    std::optional<FramePipeline> pipeline;
    try {
        pipeline.emplace(load_daemon_config_text(rec.config_snapshot, "/"));
    } catch (const std::exception& e) {
        notes.push_back(std::string("raw bytes: the stored config no longer loads: ") + e.what());
        return std::nullopt;
    }
    auto visited = store.for_each_raw_chunk(run, [&](const storage::RawChunk& chunk) {
        const int source = pipeline->source_index(chunk.source);
        if (source < 0) return;
        std::size_t at = 0;
        for (const auto& a : chunk.arrivals) {
            pieces.push_back({a.time_s, source, chunk.bytes.substr(at, a.length)});
            at += a.length;
        }
    });
    if (!visited || pieces.empty()) return std::nullopt;
    // The io_context handled reads in arrival order; so does the replay.
    std::stable_sort(pieces.begin(), pieces.end(), [](const Piece& a, const Piece& b) { return a.arrival < b.arrival; });
    std::vector<drivers::AlignedFrame> aligned;
    for (const auto& p : pieces)
        pipeline->feed(static_cast<std::size_t>(p.source), std::as_bytes(std::span(p.bytes.data(), p.bytes.size())),
                       p.arrival, aligned);
    const double armed_at = c["armed_at_s"];
    std::vector<Frame> frames;
    frames.reserve(aligned.size());
    for (const auto& a : aligned) {
        if (!(a.frame.time_s >= armed_at)) continue;
        Frame f;
        f.time_s = a.frame.time_s - armed_at;
        f.force_N = a.frame.force_N - c["tare_force_N"];
        f.extension_mm = a.frame.extension_mm - c["tare_extension_mm"];
        f.crosshead_mm = a.frame.crosshead_mm - c["tare_crosshead_mm"];
        frames.push_back(f);
    }
    return frames;
}

std::string fmt_value(const std::optional<double>& v) {
    if (!v) return "-";
    char buf[48];
    std::snprintf(buf, sizeof buf, "%.10g", *v);
    return buf;
}

}  // namespace

VerifyReport verify_run(storage::Store& store, std::int64_t run, const VerifyOptions& options) {
    VerifyReport report;
    report.run = run;
    auto rec = store.load_run(run);
    if (!rec) {
        report.outcome = "not verifiable";
        report.notes.push_back(rec.error());
        return report;
    }
    if (storage::is_live(rec->summary.state)) {
        report.outcome = "not verifiable";
        report.notes.push_back("the run is still " + std::string(storage::name_of(rec->summary.state)));
        return report;
    }

    if (!rec->summary.digest_sha256.empty()) {
        report.integrity_checked = true;
        auto now = store.compute_digest(run);
        report.integrity_ok = now && *now == rec->summary.digest_sha256;
        if (!now)
            report.notes.push_back("the run's stored data can no longer be read: " + now.error());
        else if (!report.integrity_ok)
            report.notes.push_back("the run's raw bytes or frames changed after it was stored (SHA-256 differs)");
    } else {
        report.notes.push_back("no digest stored with the run: integrity not checked");
    }

    json specimen, profile_json, stored_results;
    try {
        specimen = json::parse(rec->specimen_json);
        profile_json = json::parse(rec->profile_json);
        stored_results = rec->results_json ? json::parse(*rec->results_json) : json::object();
    } catch (const json::exception& e) {
        report.outcome = "not verifiable";
        report.notes.push_back(std::string("stored specimen, profile or results unreadable: ") + e.what());
        return report;
    }
    auto profile = profile_from_json(profile_json);
    if (!profile) {
        report.outcome = "not verifiable";
        report.notes.push_back(profile.error());
        return report;
    }
    SpecimenGeometry geometry{};
    if (specimen.contains("S0_mm2") && specimen.contains("L0_mm")) {
        geometry = {specimen["S0_mm2"].get<double>(), specimen["L0_mm"].get<double>(),
                    specimen.value("parallel_length_mm", 0.0)};
    } else {
        auto s = specimen_from_json(specimen);
        auto g = s ? check(*s) : Result<SpecimenGeometry>(Error{s.error()});
        if (!g) {
            report.outcome = "not verifiable";
            report.notes.push_back(g.error());
            return report;
        }
        geometry = *g;
    }

    std::optional<double> removed_after;
    for (const auto& e : rec->events)
        if (e.kind == EventKind::extensometer_lost && e.label == "removed by the operator") removed_after = e.time_s;

    auto frames = store.load_frames(run);
    if (!frames) {
        report.outcome = "not verifiable";
        report.notes.push_back(frames.error());
        return report;
    }
    const auto now = analyse(*frames, geometry, *profile, removed_after);
    compare_results(stored_results, now.results, options.tolerance_rel, "", report.rows);
    compare_events(rec->events, now.events, options.tolerance_rel, report.rows);

    if (options.raw) {
        if (auto rebuilt = reparse(store, run, *rec, report.notes)) {
            // Line the rebuilt frames up with the stored ones: the same record
            // gives the same values to the bit, while the rebuilt time base,
            // lacking what the live one saw before arming, may put the times a
            // frame or two aside. Take the frame nearest in time whose values match.
            const auto& stored = *frames;
            std::size_t first = 0;
            if (!stored.empty()) {
                double best = INFINITY;
                const Frame& s0 = stored.front();
                for (std::size_t k = 0; k < rebuilt->size(); ++k) {
                    const Frame& r = (*rebuilt)[k];
                    if (r.time_s > s0.time_s + 1.0) break;
                    const bool values = same(r.force_N, s0.force_N, 0) && same(r.extension_mm, s0.extension_mm, 0) &&
                                        same(r.crosshead_mm, s0.crosshead_mm, 0);
                    const double d = std::abs(r.time_s - s0.time_s);
                    if (values && d < best) {
                        best = d;
                        first = k;
                    }
                }
            }
            std::vector<Frame> same_span(rebuilt->begin() + static_cast<long>(first), rebuilt->end());
            if (same_span.size() > stored.size()) same_span.resize(stored.size());
            std::size_t differing = 0;
            const double tol = options.raw_tolerance_rel;
            for (std::size_t k = 0; k < same_span.size(); ++k) {
                const auto& a = stored[k];
                const auto& b = same_span[k];
                if (!(std::abs(a.time_s - b.time_s) < 5e-3 && same(a.force_N, b.force_N, tol) &&
                      same(a.extension_mm, b.extension_mm, tol) && same(a.crosshead_mm, b.crosshead_mm, tol)))
                    ++differing;
            }
            report.raw_rows.push_back({"frames re-parsed from raw bytes", static_cast<double>(stored.size()),
                                       static_cast<double>(same_span.size()),
                                       same_span.size() + 2 >= stored.size()});
            report.raw_rows.push_back({"frames differing beyond the raw tolerance", 0.0, static_cast<double>(differing),
                                       differing <= stored.size() / 1000});
            const auto again = analyse(same_span, geometry, *profile, removed_after);
            compare_results(stored_results, again.results, std::max(tol, options.tolerance_rel) * 10, "raw: ",
                            report.raw_rows);
            report.raw_rows.erase(std::remove_if(report.raw_rows.begin(), report.raw_rows.end(),
                                                 [](const VerifyRow& r) { return r.quantity == "raw: warnings"; }),
                                  report.raw_rows.end());
        }
    }

    const auto all_ok = [](const std::vector<VerifyRow>& rows) {
        return std::all_of(rows.begin(), rows.end(), [](const VerifyRow& r) { return r.ok; });
    };
    if (!report.integrity_ok) report.outcome = "data changed";
    else if (!all_ok(report.rows) || !all_ok(report.raw_rows)) report.outcome = "mismatch";
    else if (options.tolerance_rel > 0) report.outcome = "within tolerance";
    else report.outcome = "identical";
    return report;
}

storage::Status record_verification(storage::Store& store, const VerifyReport& report) {
    json details;
    details["notes"] = report.notes;
    json rows = json::array();
    for (const auto* list : {&report.rows, &report.raw_rows})
        for (const auto& r : *list)
            if (!r.ok) rows.push_back({{"quantity", r.quantity}, {"stored", r.stored ? json(*r.stored) : json()},
                                       {"now", r.now ? json(*r.now) : json()}});
    details["differences"] = rows;
    details["integrity_ok"] = report.integrity_ok;
    auto stmt = store.db().prepare(
        "INSERT INTO verifications (run_id, unix_s, software_version, outcome, details) VALUES (?, ?, ?, ?, ?)");
    if (!stmt) return Error{stmt.error()};
    const double now = std::chrono::duration<double>(std::chrono::system_clock::now().time_since_epoch()).count();
    return stmt->bind(1, report.run)
        .bind(2, now)
        .bind(3, std::string_view(TENSILED_VERSION))
        .bind(4, std::string_view(report.outcome))
        .bind(5, std::string_view(details.dump()))
        .run();
}

std::string report_text(const VerifyReport& report) {
    std::string out = "run " + std::to_string(report.run) + ": " + report.outcome + "\n";
    char line[256];
    auto table = [&](const std::vector<VerifyRow>& rows, bool only_bad) {
        for (const auto& r : rows) {
            if (only_bad && r.ok) continue;
            std::string diff = "";
            if (r.stored && r.now) {
                char d[48];
                std::snprintf(d, sizeof d, "%+.3g", *r.now - *r.stored);
                diff = d;
            }
            std::snprintf(line, sizeof line, "  %-4s %-44s %18s %18s %12s\n", r.ok ? "ok" : "DIFF", r.quantity.c_str(),
                          fmt_value(r.stored).c_str(), fmt_value(r.now).c_str(), diff.c_str());
            out += line;
        }
    };
    std::snprintf(line, sizeof line, "  %-4s %-44s %18s %18s %12s\n", "", "quantity", "stored", "now", "difference");
    out += line;
    table(report.rows, false);
    table(report.raw_rows, false);
    if (report.integrity_checked)
        out += std::string("  integrity (SHA-256 of raw bytes and frames): ") + (report.integrity_ok ? "unchanged" : "CHANGED") + "\n";
    for (const auto& n : report.notes) out += "  note: " + n + "\n";
    return out;
}

}  // namespace tensile
