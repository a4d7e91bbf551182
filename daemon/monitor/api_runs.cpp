// Stored runs for the API; see api_runs.hpp.
#include "api_runs.hpp"

#include <charconv>
#include <cmath>
#include <cstdio>
#include <ctime>

#include "daemon/offline/results_json.hpp"

namespace tensile::monitor {

using nlohmann::json;

namespace {

json number(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
json opt(const std::optional<double>& v) { return v ? json(*v) : json(nullptr); }

std::optional<double> parse_number(const std::string& s) {
    double v = 0;
    const auto* end = s.data() + s.size();
    const auto r = std::from_chars(s.data(), end, v);
    if (r.ec != std::errc{} || r.ptr != end || !std::isfinite(v)) return std::nullopt;
    return v;
}

// YYYY-MM-DD (UTC midnight) or Unix seconds.
std::optional<double> parse_time(const std::string& s, bool end_of_day) {
    int y = 0, m = 0, d = 0;
    char tail = 0;
    if (s.size() == 10 && std::sscanf(s.c_str(), "%4d-%2d-%2d%c", &y, &m, &d, &tail) == 3 && m >= 1 && m <= 12 &&
        d >= 1 && d <= 31) {
        std::tm tm{};
        tm.tm_year = y - 1900;
        tm.tm_mon = m - 1;
        tm.tm_mday = d;
        const double t = static_cast<double>(timegm(&tm));
        return end_of_day ? t + 86400.0 - 1e-3 : t;
    }
    return parse_number(s);
}

json summary_json(const storage::RunSummary& s) {
    return {{"id", s.id},
            {"material", s.material},
            {"state", storage::name_of(s.state)},
            {"state_cause", s.state_cause},
            {"created_unix_s", s.created_unix_s},
            {"started_unix_s", opt(s.started_unix_s)},
            {"finished_unix_s", opt(s.finished_unix_s)},
            {"has_results", s.has_results},
            {"digest_sha256", s.digest_sha256.empty() ? json(nullptr) : json(s.digest_sha256)}};
}

json parse_or_null(const std::string& text) {
    auto j = json::parse(text, nullptr, false);
    return j.is_discarded() ? json(nullptr) : j;
}

Reply store_error(const std::string& message, std::int64_t run) {
    if (message.rfind("no run", 0) == 0) return error_reply(404, "no run " + std::to_string(run));
    return error_reply(500, "database: " + message);
}

// S0 and L0 as stored with the run (the keeper writes them at arming).
bool geometry_of(const storage::RunRecord& r, double& S0, double& L0) {
    const auto spec = parse_or_null(r.specimen_json);
    S0 = spec.is_object() && spec.contains("S0_mm2") && spec["S0_mm2"].is_number() ? spec["S0_mm2"].get<double>() : NAN;
    L0 = spec.is_object() && spec.contains("L0_mm") && spec["L0_mm"].is_number() ? spec["L0_mm"].get<double>() : NAN;
    return std::isfinite(S0) && S0 > 0 && std::isfinite(L0) && L0 > 0;
}

}  // namespace

std::optional<std::int64_t> parse_run_id(const std::string& text) {
    std::int64_t v = 0;
    const auto* end = text.data() + text.size();
    const auto r = std::from_chars(text.data(), end, v);
    if (text.empty() || r.ec != std::errc{} || r.ptr != end || v <= 0) return std::nullopt;
    return v;
}

Result<storage::RunFilter> parse_run_filter(const Query& q) {
    storage::RunFilter f;
    for (const auto& [k, v] : q) {
        if (k == "from" || k == "to") {
            const auto t = parse_time(v, k == "to");
            if (!t) return Error{"parameter '" + k + "': '" + v + "'; expected a date YYYY-MM-DD or Unix seconds"};
            (k == "from" ? f.from_unix_s : f.to_unix_s) = *t;
        } else if (k == "state") {
            const auto s = storage::parse_run_state(v);
            if (!s) return Error{"parameter 'state': '" + v + "'; expected armed, running, finished, aborted, interrupted or faulted"};
            f.state = *s;
        } else if (k == "material") {
            f.material_contains = v;
        } else if (k == "limit") {
            const auto n = parse_number(v);
            if (!n || *n < 1 || *n > 10000 || *n != std::floor(*n))
                return Error{"parameter 'limit': '" + v + "'; expected a whole number from 1 to 10000"};
            f.limit = static_cast<std::int64_t>(*n);
        } else {
            return Error{"unknown parameter '" + k + "'; expected from, to, state, material or limit"};
        }
    }
    return f;
}

Result<FramesQuery> parse_frames_query(const Query& q) {
    FramesQuery f;
    for (const auto& [k, v] : q) {
        const auto n = parse_number(v);
        if (k == "from" || k == "to") {
            if (!n) return Error{"parameter '" + k + "': '" + v + "'; expected seconds from arming, e.g. 12.5"};
            (k == "from" ? f.from_s : f.to_s) = *n;
        } else if (k == "points") {
            if (!n || *n < 1 || *n > 20000 || *n != std::floor(*n))
                return Error{"parameter 'points': '" + v + "'; expected a whole number from 1 to 20000"};
            f.points = static_cast<std::size_t>(*n);
        } else {
            return Error{"unknown parameter '" + k + "'; expected from, to or points"};
        }
    }
    if (f.to_s < f.from_s) return Error{"parameter 'to' is before 'from'"};
    return f;
}

Reply list_runs(storage::Store& store, const storage::RunFilter& filter) {
    auto runs = store.list_runs(filter);
    if (!runs) return error_reply(500, "database: " + runs.error());
    // Written one run at a time: a document of every run first cost about
    // 4 KB a run with its text (the limit allows 10,000), which the allocator
    // kept after the reply; the text alone is about 300 bytes a run.
    Reply reply{200, "application/json", "{\"count\":" + std::to_string(runs->size()) + ",\"runs\":[", {}};
    for (std::size_t i = 0; i < runs->size(); ++i) {
        if (i > 0) reply.body += ',';
        reply.body += summary_json((*runs)[i]).dump(-1, ' ', false, json::error_handler_t::replace);
    }
    reply.body += "]}";
    return reply;
}

Reply show_run(storage::Store& store, std::int64_t run) {
    auto r = store.load_run(run);
    if (!r) return store_error(r.error(), run);
    json j = summary_json(r->summary);
    j["specimen"] = parse_or_null(r->specimen_json);
    j["profile"] = parse_or_null(r->profile_json);
    j["software_version"] = r->software_version;
    j["frame_count"] = r->frame_count;
    // Result keys carry their unit (E_MPa, Rp0.2_MPa, Fm_N, Ag_pct...); null when not determined.
    j["results"] = r->results_json ? parse_or_null(*r->results_json) : json(nullptr);
    j["strain_rate_compliance"] =
        j["results"].is_object() && j["results"].contains("strain_rate") ? j["results"]["strain_rate"] : json(nullptr);
    j["events"] = to_json(r->events);
    json states = json::array();
    for (const auto& s : r->states)
        states.push_back({{"state", storage::name_of(s.state)}, {"cause", s.cause}, {"unix_s", s.unix_s}});
    j["states"] = states;
    json alarms = json::array();
    for (const auto& a : r->alarms) alarms.push_back({{"kind", a.kind}, {"message", a.message}, {"unix_s", a.unix_s}});
    j["alarms"] = alarms;
    return json_reply(j);
}

Reply run_frames(storage::Store& store, std::int64_t run, const FramesQuery& q) {
    auto r = store.load_run(run);
    if (!r) return store_error(r.error(), run);
    double S0 = NAN, L0 = NAN;
    geometry_of(*r, S0, L0);
    auto buckets = store.decimate(run, q.points, q.from_s, q.to_s);
    if (!buckets) return error_reply(500, "database: " + buckets.error());
    // Columns rather than rows: a few thousand points stay small and plot directly.
    json cols = {{"from_s", json::array()},       {"to_s", json::array()},          {"count", json::array()},
                 {"force_min_N", json::array()},  {"force_max_N", json::array()},   {"extension_min_mm", json::array()},
                 {"extension_max_mm", json::array()}, {"crosshead_min_mm", json::array()},
                 {"crosshead_max_mm", json::array()}, {"stress_min_MPa", json::array()},
                 {"stress_max_MPa", json::array()},   {"strain_min_pct", json::array()},
                 {"strain_max_pct", json::array()}};
    for (const auto& b : *buckets) {
        if (b.count == 0) continue;  // empty buckets carry nothing to draw
        cols["from_s"].push_back(b.from_s);
        cols["to_s"].push_back(b.to_s);
        cols["count"].push_back(b.count);
        cols["force_min_N"].push_back(number(b.force_min));
        cols["force_max_N"].push_back(number(b.force_max));
        cols["extension_min_mm"].push_back(number(b.extension_min));
        cols["extension_max_mm"].push_back(number(b.extension_max));
        cols["crosshead_min_mm"].push_back(number(b.crosshead_min));
        cols["crosshead_max_mm"].push_back(number(b.crosshead_max));
        cols["stress_min_MPa"].push_back(number(b.force_min / S0));
        cols["stress_max_MPa"].push_back(number(b.force_max / S0));
        cols["strain_min_pct"].push_back(number(100.0 * b.extension_min / L0));
        cols["strain_max_pct"].push_back(number(100.0 * b.extension_max / L0));
    }
    return json_reply({{"run_id", run}, {"S0_mm2", number(S0)}, {"L0_mm", number(L0)}, {"buckets", cols},
                       {"frame_count", r->frame_count}, {"strain_from", "extensometer (engineering, not toe-corrected)"}});
}

Reply export_run(storage::Store& store, std::int64_t run, const std::string& format) {
    auto r = store.load_run(run);
    if (!r) return store_error(r.error(), run);
    double S0 = NAN, L0 = NAN;
    if (!geometry_of(*r, S0, L0)) return error_reply(500, "run " + std::to_string(run) + " has no stored S0 and L0");
    Reply reply;
    const std::string base = "run-" + std::to_string(run);
    if (format == "csv") {
        // Stress = F/S0 and strain = extension/L0·100 from the stored specimen,
        // empty where the channel had no value (e.g. after the hand-over).
        std::string out = std::string(export_csv_header) + "\n";
        char line[256];
        auto cell = [](char* at, std::size_t room, double v) {
            return std::isfinite(v) ? std::snprintf(at, room, "%.9g", v) : 0;
        };
        auto s = store.for_each_frame(run, -storage::all_time, storage::all_time, [&](const Frame& f) {
            const double values[6] = {f.time_s, f.force_N, f.extension_mm, f.crosshead_mm, f.force_N / S0,
                                      100.0 * f.extension_mm / L0};
            std::size_t at = 0;
            for (int i = 0; i < 6; ++i) {
                if (i) line[at++] = ',';
                at += static_cast<std::size_t>(cell(line + at, sizeof line - at, values[i]));
            }
            line[at++] = '\n';
            out.append(line, at);
        });
        if (!s) return error_reply(500, "database: " + s.error());
        reply.content_type = "text/csv; charset=utf-8";
        reply.body = std::move(out);
        reply.headers.emplace_back("Content-Disposition", "attachment; filename=\"" + base + ".csv\"");
        return reply;
    }
    json cols = {{"time_s", json::array()}, {"force_N", json::array()}, {"extension_mm", json::array()},
                 {"crosshead_mm", json::array()}, {"stress_MPa", json::array()}, {"strain_pct", json::array()}};
    auto s = store.for_each_frame(run, -storage::all_time, storage::all_time, [&](const Frame& f) {
        cols["time_s"].push_back(number(f.time_s));
        cols["force_N"].push_back(number(f.force_N));
        cols["extension_mm"].push_back(number(f.extension_mm));
        cols["crosshead_mm"].push_back(number(f.crosshead_mm));
        cols["stress_MPa"].push_back(number(f.force_N / S0));
        cols["strain_pct"].push_back(number(100.0 * f.extension_mm / L0));
    });
    if (!s) return error_reply(500, "database: " + s.error());
    auto shown = show_run(store, run);
    json j = json::parse(shown.body, nullptr, false);
    j["frames"] = cols;
    reply = json_reply(j);
    reply.headers.emplace_back("Content-Disposition", "attachment; filename=\"" + base + ".json\"");
    return reply;
}

}  // namespace tensile::monitor
