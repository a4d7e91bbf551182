// The daemon commands of tensilectl; see daemon_commands.hpp.
#include "daemon_commands.hpp"

#include <cmath>
#include <cstdio>
#include <ctime>
#include <fstream>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <sstream>

#include "daemon_client.hpp"
#include "drivers/serial_port.hpp"

namespace tensile::ctl {

using nlohmann::json;

namespace {

std::string num(const json& v, int decimals = 2) {
    if (!v.is_number()) return "-";
    char buf[64];
    std::snprintf(buf, sizeof buf, "%.*f", decimals, v.get<double>());
    return buf;
}

std::string when(const json& v) {
    if (!v.is_number()) return "-";
    const auto t = static_cast<std::time_t>(v.get<double>());
    char buf[32];
    std::strftime(buf, sizeof buf, "%Y-%m-%d %H:%M:%S", std::localtime(&t));
    return buf;
}

// Fetches a JSON document; prints the failure and sets the code when it fails.
bool get_json(const DaemonTarget& t, const std::string& path, json& out, int& code) {
    const auto a = http_call(t, "GET", path);
    code = report_failure(t, a);
    if (code != 0) return false;
    out = json::parse(a.body, nullptr, false);
    return true;
}

void print_status(const json& s) {
    std::cout << "state     " << s["state"].get<std::string>() << "   hand-over " << s["handover"].get<std::string>()
              << '\n';
    if (s["run"].is_object())
        std::cout << "run       " << s["run"]["number"] << " (stored id " << s["run"]["id"] << ") "
                  << s["run"]["label"].get<std::string>() << ", S0 " << num(s["run"]["S0_mm2"], 3) << " mm², L0 "
                  << num(s["run"]["L0_mm"]) << " mm\n";
    const auto& v = s["values"];
    std::cout << "force     " << num(v["force_N"], 1) << " N   extension " << num(v["extension_mm"], 4)
              << " mm   crosshead " << num(v["crosshead_mm"], 3) << " mm\n"
              << "stress    " << num(v["stress_MPa"], 1) << " MPa   strain " << num(v["strain_pct"], 3) << " %"
              << (v.contains("strain_source") ? " (" + v["strain_source"].get<std::string>() + ")" : "") << '\n';
    for (const auto& src : s["sources"])
        std::cout << "source    " << src["name"].get<std::string>() << ": " << src["state"].get<std::string>() << ", "
                  << src["records"] << " records, " << src["bad_records"] << " bad, " << src["resync_bytes"]
                  << " bytes skipped\n";
    std::cout << "frames    " << s["acquisition"]["frames"] << " (" << num(s["acquisition"]["frames_per_s"], 0)
              << "/s); recorder committed " << s["recorder"]["frames_committed"] << ", dropped "
              << s["recorder"]["frames_dropped"] << ", queue " << s["recorder"]["queue_depth"] << '\n';
    for (const auto& a : s["alarms"])
        std::cout << "alarm     " << when(a["unix_s"]) << ' ' << a["kind"].get<std::string>() << ": "
                  << a["message"].get<std::string>() << '\n';
}

void print_run(const json& r) {
    std::cout << "run " << r["id"] << ": " << r["material"].get<std::string>() << '\n'
              << "  state " << r["state"].get<std::string>() << " (" << r["state_cause"].get<std::string>() << "), armed "
              << when(r["created_unix_s"]) << ", " << r["frame_count"] << " frames\n";
    const auto& sp = r["specimen"];
    if (sp.is_object())
        std::cout << "  specimen " << sp.value("label", "") << ": S0 " << num(sp["S0_mm2"], 3) << " mm², L0 "
                  << num(sp["L0_mm"]) << " mm\n";
    if (r["results"].is_object()) {
        std::cout << "  results:\n";
        for (const auto& [k, v] : r["results"].items())
            if (v.is_number()) std::cout << "    " << k << " = " << num(v, 4) << '\n';
        for (const auto& w : r["results"].value("warnings", json::array())) std::cout << "    note: " << w.get<std::string>() << '\n';
    }
    for (const auto& e : r["events"])
        std::cout << "  event " << num(e["time_s"], 3) << " s  " << e["kind"].get<std::string>() << ' '
                  << e.value("label", "") << "  " << num(e["stress_MPa"], 1) << " MPa\n";
    for (const auto& a : r["alarms"])
        std::cout << "  alarm " << when(a["unix_s"]) << ' ' << a["kind"].get<std::string>() << ": "
                  << a["message"].get<std::string>() << '\n';
    if (!r["digest_sha256"].is_null()) std::cout << "  SHA-256 " << r["digest_sha256"].get<std::string>() << '\n';
}

// Percent-encodes everything but letters, digits and -._ (ids and filters are user text).
std::string encode(const std::string& v) {
    std::string out;
    for (const unsigned char c : v) {
        if (std::isalnum(c) || c == '-' || c == '.' || c == '_') {
            out += static_cast<char>(c);
        } else {
            char buf[4];
            std::snprintf(buf, sizeof buf, "%%%02X", c);
            out += buf;
        }
    }
    return out;
}

std::string query_string(const std::vector<std::pair<std::string, std::string>>& params) {
    std::string q;
    for (const auto& [k, v] : params)
        if (!v.empty()) q += (q.empty() ? "?" : "&") + k + "=" + encode(v);
    return q;
}

struct ArmOptions {
    std::string label, material, profile, specimen_file;
    double width = 0, thickness = 0, diameter = 0, wall = 0, area = 0, gauge = 0, proportional = 0, parallel = 0;
};

}  // namespace

void add_daemon_commands(CLI::App& app, int& exit_code) {
    // Options live as long as the App: parsing fills them, callbacks read them.
    auto target = std::make_shared<DaemonTarget>();
    auto as_json = std::make_shared<bool>(false);

    auto* status = app.add_subcommand("status", "State, live values, sources, recorder and alarms of the daemon");
    add_target_options(*status, *target);
    status->add_flag("--json", *as_json, "Print the daemon's JSON");
    status->callback([&exit_code, target, as_json] {
        json s;
        if (!get_json(*target, "/api/v1/status", s, exit_code)) return;
        if (*as_json) std::cout << s.dump(2) << '\n';
        else print_status(s);
    });

    // Commands without arguments.
    for (const auto& [name, path, help] : std::vector<std::tuple<std::string, std::string, std::string>>{
             {"start", "/api/v1/start", "Start the armed run now (without waiting for the preload)"},
             {"stop", "/api/v1/stop", "Finish the running run now"},
             {"confirm-handover", "/api/v1/handover/confirm", "Confirm the extensometer has been taken off"}}) {
        auto* cmd = app.add_subcommand(name, help);
        add_target_options(*cmd, *target);
        cmd->callback([&exit_code, target, path = path] {
            const auto a = http_call(*target, "POST", path, "", true);
            exit_code = report_failure(*target, a);
            if (exit_code == 0) std::cout << json::parse(a.body, nullptr, false).value("state", "?") << '\n';
        });
    }
    auto cause = std::make_shared<std::string>("aborted from tensilectl");
    auto* abort = app.add_subcommand("abort", "Abort the live run");
    add_target_options(*abort, *target);
    abort->add_option("--cause", *cause, "Why, for the record");
    abort->callback([&exit_code, target, cause] {
        const auto a = http_call(*target, "POST", "/api/v1/abort", json{{"cause", *cause}}.dump(), true);
        exit_code = report_failure(*target, a);
        if (exit_code == 0) std::cout << "aborted\n";
    });

    auto arm = std::make_shared<ArmOptions>();
    auto* arm_cmd = app.add_subcommand("arm", "Arm a run for a specimen (the daemon tares and starts at the preload)");
    add_target_options(*arm_cmd, *target);
    arm_cmd->add_option("--specimen-json", arm->specimen_file, "Specimen as JSON (the API's form) instead of the options")
        ->check(CLI::ExistingFile);
    arm_cmd->add_option("--label", arm->label, "Specimen id or label");
    arm_cmd->add_option("--material", arm->material, "Material text");
    arm_cmd->add_option("--width", arm->width, "Width, mm (flat)");
    arm_cmd->add_option("--thickness", arm->thickness, "Thickness, mm (flat)");
    arm_cmd->add_option("--diameter", arm->diameter, "Diameter, mm (round; outer for a tube)");
    arm_cmd->add_option("--wall", arm->wall, "Wall thickness, mm (tube)");
    arm_cmd->add_option("--area", arm->area, "Cross-section S0, mm²");
    arm_cmd->add_option("--gauge-length", arm->gauge, "Gauge length L0, mm");
    arm_cmd->add_option("--proportional", arm->proportional, "Proportional gauge length k·√S0 (5.65 or 11.3)");
    arm_cmd->add_option("--parallel-length", arm->parallel, "Parallel length Lc, mm");
    arm_cmd->add_option("--profile", arm->profile, "Profile name (default: the config's)");
    arm_cmd->callback([&exit_code, target, arm] {
        json spec;
        if (!arm->specimen_file.empty()) {
            std::ifstream in(arm->specimen_file);
            spec = json::parse(in, nullptr, false);
            if (spec.is_discarded()) {
                std::cerr << "tensilectl: " << arm->specimen_file << " is not valid JSON\n";
                exit_code = exit_usage;
                return;
            }
        } else {
            const char* shape = arm->area > 0 ? "area" : arm->wall > 0 ? "tube" : arm->diameter > 0 ? "round" : "rectangular";
            spec = {{"label", arm->label}, {"material", arm->material}, {"shape", shape},
                    {"width_mm", arm->width}, {"thickness_mm", arm->thickness}, {"diameter_mm", arm->diameter},
                    {"wall_mm", arm->wall}, {"area_mm2", arm->area}, {"gauge_length_mm", arm->gauge},
                    {"proportional_factor", arm->proportional}, {"parallel_length_mm", arm->parallel}};
        }
        json body = {{"specimen", spec}};
        if (!arm->profile.empty()) body["profile"] = arm->profile;
        const auto ans = http_call(*target, "POST", "/api/v1/arm", body.dump(), true);
        exit_code = report_failure(*target, ans);
        if (exit_code == 0) {
            const auto j = json::parse(ans.body, nullptr, false);
            std::cout << "armed: run " << j.value("run", 0) << ", stored id " << j.value("run_id", 0) << '\n';
        }
    });

    auto filter = std::make_shared<std::vector<std::pair<std::string, std::string>>>(
        std::vector<std::pair<std::string, std::string>>{{"from", ""}, {"to", ""}, {"state", ""}, {"material", ""}, {"limit", ""}});
    auto* runs = app.add_subcommand("runs", "List stored runs, newest first");
    add_target_options(*runs, *target);
    runs->add_option("--from", (*filter)[0].second, "Armed on or after this date (YYYY-MM-DD) or Unix time");
    runs->add_option("--to", (*filter)[1].second, "Armed on or before this date (YYYY-MM-DD) or Unix time");
    runs->add_option("--state", (*filter)[2].second, "finished, aborted, interrupted, faulted, armed or running");
    runs->add_option("--material", (*filter)[3].second, "Part of the material text");
    runs->add_option("--limit", (*filter)[4].second, "At most this many");
    runs->add_flag("--json", *as_json, "Print the daemon's JSON");
    runs->callback([&exit_code, target, filter, as_json] {
        json r;
        if (!get_json(*target, "/api/v1/runs" + query_string(*filter), r, exit_code)) return;
        if (*as_json) return void(std::cout << r.dump(2) << '\n');
        for (const auto& s : r["runs"])
            std::cout << s["id"] << "  " << when(s["created_unix_s"]) << "  " << s["state"].get<std::string>() << "  "
                      << s["material"].get<std::string>() << '\n';
        if (r["runs"].empty()) std::cout << "no runs\n";
    });

    auto run_id = std::make_shared<std::string>();
    auto* show = app.add_subcommand("show", "One stored run: specimen, results, events, alarms");
    add_target_options(*show, *target);
    show->add_option("RUN", *run_id, "Stored run id")->required();
    show->add_flag("--json", *as_json, "Print the daemon's JSON");
    show->callback([&exit_code, target, run_id, as_json] {
        json r;
        if (!get_json(*target, "/api/v1/runs/" + encode(*run_id), r, exit_code)) return;
        if (*as_json) std::cout << r.dump(2) << '\n';
        else print_run(r);
    });

    auto format = std::make_shared<std::string>("csv");
    auto out_file = std::make_shared<std::string>();
    auto* exp = app.add_subcommand("export", "Frames of a stored run as CSV or JSON");
    add_target_options(*exp, *target);
    exp->add_option("RUN", *run_id, "Stored run id")->required();
    exp->add_option("--format", *format, "csv or json")->check(CLI::IsMember({"csv", "json"}));
    exp->add_option("-o,--output", *out_file, "Write to this file instead of stdout");
    exp->callback([&exit_code, target, run_id, format, out_file] {
        const auto a = http_call(*target, "GET", "/api/v1/runs/" + encode(*run_id) +
                                                      "/export?format=" + *format);
        exit_code = report_failure(*target, a);
        if (exit_code != 0) return;
        if (out_file->empty()) {
            std::cout << a.body;
        } else {
            std::ofstream o(*out_file, std::ios::binary);
            o << a.body;
            if (!o) {
                std::cerr << "tensilectl: cannot write " << *out_file << '\n';
                exit_code = exit_usage;
            }
        }
    });

    auto* ports = app.add_subcommand("ports", "Serial ports on this machine, with USB ids and serial numbers");
    ports->callback([&exit_code] {
        std::string error;
        const auto list = drivers::list_serial_ports(error);
        if (!error.empty()) {
            std::cerr << "tensilectl: cannot list serial ports: " << error << '\n';
            exit_code = exit_refused;
            return;
        }
        if (list.empty()) std::cout << "no serial ports found\n";
        for (const auto& p : list) {
            std::cout << p.path << "  " << (p.description.empty() ? "-" : p.description) << "  " << p.transport;
            if (p.usb_vid >= 0) {
                char ids[32];
                std::snprintf(ids, sizeof ids, "  USB %04x:%04x", p.usb_vid, p.usb_pid);
                std::cout << ids << (p.usb_serial.empty() ? "" : "  serial " + p.usb_serial);
            }
            std::cout << '\n';
        }
    });
}

}  // namespace tensile::ctl
