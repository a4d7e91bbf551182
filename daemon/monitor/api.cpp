// Routing and the commands of the monitor API; see api.hpp.
#include "api.hpp"

#include "api_runs.hpp"
#include "daemon/offline/specimen_json.hpp"
#include "daemon/tensiled/run_keeper.hpp"
#include "shared_state.hpp"
#include "web_assets.hpp"

namespace tensile::monitor {

using nlohmann::json;

namespace {

std::vector<std::string> split_path(const std::string& path) {
    std::vector<std::string> parts;
    std::size_t at = 0;
    while (at < path.size()) {
        const auto slash = path.find('/', at);
        const auto end = slash == std::string::npos ? path.size() : slash;
        if (end > at) parts.push_back(path.substr(at, end - at));
        at = end + 1;
    }
    return parts;
}

Reply method_not_allowed(const std::string& method, const std::string& path, const char* allow) {
    auto r = error_reply(405, method + " is not allowed on " + path + "; use " + allow);
    r.headers.emplace_back("Allow", allow);
    return r;
}

}  // namespace

Api::Api(ApiContext context) : c_(std::move(context)), started_s_(steady_now_s()) {}

void Api::handle(ApiRequest r, std::function<void(Reply)> done) {
    const bool get = r.method == "GET" || r.method == "HEAD";
    // The page's own files carry no data and need no token, so a browser can
    // load the page and then ask for the token.
    if (auto asset = find_asset(r.path == "/" ? "/index.html" : r.path); asset && r.path.rfind("/api/", 0) != 0) {
        if (!get) return done(method_not_allowed(r.method, r.path, "GET"));
        return done(Reply{200, std::string(asset->content_type), std::string(asset->body), {}});
    }
    if (r.path == "/lib/chart.min.js")
        return done(error_reply(404, "the chart library was not found at build time; install libjs-chart.js and rebuild"));

    const auto parts = split_path(r.path);
    const bool is_api = parts.size() >= 2 && parts[0] == "api" && parts[1] == "v1";
    const bool is_metrics = parts.size() == 1 && parts[0] == "metrics";
    if (!is_api && !is_metrics) return done(error_reply(404, "no such path: " + r.path));

    // Which routes change the rig.
    static const std::vector<std::string> commands = {"arm", "start", "stop", "abort"};
    const bool is_command = is_api && ((parts.size() == 3 && std::find(commands.begin(), commands.end(), parts[2]) != commands.end()) ||
                                       (parts.size() == 4 && parts[2] == "handover" && parts[3] == "confirm"));
    if (is_command) {
        if (r.method != "POST") return done(method_not_allowed(r.method, r.path, "POST"));
        if (auto refusal = c_.access.check(r.authorization, true)) return done(error_reply(refusal->status, refusal->message));
        return done(command(parts.size() == 4 ? "handover/confirm" : parts[2], r.body));
    }
    if (auto refusal = c_.access.check(r.authorization, false)) return done(error_reply(refusal->status, refusal->message));

    if (is_metrics) {
        if (!get) return done(method_not_allowed(r.method, r.path, "GET"));
        return done(Reply{200, "text/plain; version=0.0.4; charset=utf-8", metrics(), {}});
    }
    if (parts.size() == 3 && parts[2] == "status") {
        if (!get) return done(method_not_allowed(r.method, r.path, "GET"));
        return done(json_reply(status()));
    }
    if (parts.size() >= 3 && parts[2] == "runs") {
        if (!get) return done(method_not_allowed(r.method, r.path, "GET"));
        return runs(r, done);
    }
    if (parts.size() == 3 && parts[2] == "live") return done(error_reply(400, "/api/v1/live needs a WebSocket upgrade"));
    return done(error_reply(404, "no such endpoint: " + r.path));
}

void Api::runs(const ApiRequest& r, const std::function<void(Reply)>& done) {
    const auto parts = split_path(r.path);
    if (parts.size() == 3) {
        auto filter = parse_run_filter(r.query);
        if (!filter) return done(error_reply(400, filter.error()));
        return c_.reader.submit([f = *filter](storage::Store& s) { return list_runs(s, f); }, done);
    }
    const auto id = parse_run_id(parts[3]);
    if (!id) return done(error_reply(404, "no run '" + parts[3] + "'; run ids are whole numbers from 1"));
    if (parts.size() == 4) {
        if (!r.query.empty()) return done(error_reply(400, "unknown parameter '" + r.query.begin()->first + "'"));
        return c_.reader.submit([id = *id](storage::Store& s) { return show_run(s, id); }, done);
    }
    if (parts.size() == 5 && parts[4] == "frames") {
        auto q = parse_frames_query(r.query);
        if (!q) return done(error_reply(400, q.error()));
        return c_.reader.submit([id = *id, q = *q](storage::Store& s) { return run_frames(s, id, q); }, done);
    }
    if (parts.size() == 5 && parts[4] == "export") {
        std::string format = "csv";
        for (const auto& [k, v] : r.query) {
            if (k != "format") return done(error_reply(400, "unknown parameter '" + k + "'; expected format"));
            format = v;
        }
        if (format != "csv" && format != "json")
            return done(error_reply(400, "parameter 'format': '" + format + "'; expected csv or json"));
        return c_.reader.submit([id = *id, format](storage::Store& s) { return export_run(s, id, format); }, done);
    }
    return done(error_reply(404, "no such endpoint: " + r.path));
}

Reply Api::command(const std::string& name, const std::string& body) {
    auto j = parse_command_body(body);
    if (!j) return error_reply(400, j.error());
    Result<bool> done = Error{""};
    if (name == "arm") {
        if (!j->contains("specimen")) return error_reply(400, "missing field 'specimen' (an object with shape, dimensions and gauge length)");
        auto specimen = specimen_from_json((*j)["specimen"]);
        if (!specimen) return error_reply(400, specimen.error());
        if (auto geometry = check(*specimen); !geometry) return error_reply(400, "specimen: " + geometry.error());
        std::string profile;
        if (j->contains("profile")) {
            if (!(*j)["profile"].is_string()) return error_reply(400, "field 'profile' must be a profile name (text)");
            profile = (*j)["profile"].get<std::string>();
        }
        const auto& profiles = c_.rig.config().profiles;
        if (!profile.empty() && !profiles.count(profile)) {
            std::string names;
            for (const auto& [n, p] : profiles) names += (names.empty() ? "" : ", ") + n;
            return error_reply(400, "field 'profile': no profile '" + profile + "'; expected one of: " + names);
        }
        done = c_.rig.arm(*specimen, profile);
    } else if (name == "start") {
        done = c_.rig.start_run();
    } else if (name == "stop") {
        done = c_.rig.stop_run();
    } else if (name == "abort") {
        std::string cause = "aborted from the monitor";
        if (j->contains("cause")) {
            if (!(*j)["cause"].is_string()) return error_reply(400, "field 'cause' must be text");
            cause = (*j)["cause"].get<std::string>();
        }
        done = c_.rig.abort_run(cause);
    } else {
        done = c_.rig.confirm_handover();
    }
    // The rig refuses only commands that do not fit the run's state.
    if (!done) return error_reply(409, done.error());
    json out = {{"ok", true}, {"command", name}, {"state", tensile::name_of(c_.rig.state())},
                {"handover", name_of(c_.rig.handover())}};
    if (c_.rig.run()) out["run"] = c_.rig.run()->number;
    if (auto id = c_.keeper.current_run()) out["run_id"] = *id;
    return json_reply(out);
}

}  // namespace tensile::monitor
