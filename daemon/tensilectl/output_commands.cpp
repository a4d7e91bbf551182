// tensilectl commands for the operator's hands on the rig, through the API:
//   tare                          take the tare again (armed, before the start)
//                                 or the readout zero (no run live)
//   outputs                       the rig's outputs: name, kind, role
//   output NAME --send WORD       a command word on a command output (hold,
//                                 resume, stop, extensometer-off, ping)
//   output NAME --relay on|off    raise or drop a relay output
// Exit codes as the other daemon commands (daemon_commands.hpp).
//
// Error policy: the daemon decides; its JSON error is printed as is. The
// command line is checked here only for shape (exactly one of --send/--relay).
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>

#include "daemon_client.hpp"
#include "daemon_commands.hpp"

namespace tensile::ctl {

using nlohmann::json;

void add_output_commands(CLI::App& app, int& exit_code) {
    auto target = std::make_shared<DaemonTarget>();

    auto* tare = app.add_subcommand("tare", "Take the tare again before the start (or zero the readout between runs)");
    add_target_options(*tare, *target);
    tare->callback([&exit_code, target] {
        const auto a = http_call(*target, "POST", "/api/v1/tare", "", true);
        exit_code = report_failure(*target, a);
        if (exit_code != 0) return;
        const auto j = json::parse(a.body, nullptr, false);
        std::cout << (j.value("scope", "") == "run" ? "tare of the armed run" : "readout zero") << " being taken from the next "
                  << j.value("frames", 0) << " frames\n";
    });

    auto* list = app.add_subcommand("outputs", "The rig's outputs: command links and relay lines");
    add_target_options(*list, *target);
    list->callback([&exit_code, target] {
        const auto a = http_call(*target, "GET", "/api/v1/outputs");
        exit_code = report_failure(*target, a);
        if (exit_code != 0) return;
        const auto j = json::parse(a.body, nullptr, false);
        for (const auto& o : j["outputs"]) {
            std::cout << o["name"].get<std::string>() << "  " << o["kind"].get<std::string>() << " on "
                      << o["source"].get<std::string>();
            if (o.contains("line")) std::cout << " (" << o["line"].get<std::string>() << ")";
            if (o["role"].is_string()) std::cout << "  " << o["role"].get<std::string>();
            std::cout << '\n';
        }
        if (j["outputs"].empty()) std::cout << "the rig has no outputs\n";
    });

    auto name = std::make_shared<std::string>();
    auto word = std::make_shared<std::string>();
    auto relay = std::make_shared<std::string>();
    auto* use = app.add_subcommand("output", "Send a command word or set a relay on one output");
    add_target_options(*use, *target);
    use->add_option("NAME", *name, "Output name (see `tensilectl outputs`)")->required();
    auto* send_opt = use->add_option("--send", *word, "Command word: hold, resume, stop, extensometer-off or ping");
    auto* relay_opt = use->add_option("--relay", *relay, "on or off")->check(CLI::IsMember({"on", "off"}));
    send_opt->excludes(relay_opt);
    use->callback([&exit_code, target, name, word, relay, send_opt, relay_opt] {
        if (send_opt->count() == 0 && relay_opt->count() == 0) {
            std::cerr << "tensilectl: output " << *name << ": give --send WORD or --relay on|off\n";
            exit_code = exit_usage;
            return;
        }
        const json body = send_opt->count() ? json{{"send", *word}} : json{{"relay", *relay}};
        const auto a = http_call(*target, "POST", "/api/v1/outputs/" + *name, body.dump(), true);
        exit_code = report_failure(*target, a);
        if (exit_code != 0) return;
        const auto j = json::parse(a.body, nullptr, false);
        if (j.contains("reply")) std::cout << *name << ": " << j.value("command", "") << " acknowledged (" << j.value("reply", "") << ")\n";
        else std::cout << *name << ": relay " << j.value("relay", "") << '\n';
    });
}

}  // namespace tensile::ctl
