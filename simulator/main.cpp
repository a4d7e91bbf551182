// tensile-sim: a virtual tensile-testing rig. Parses the command line, loads
// the material, checks every setting, then plays one test onto a file, stdout,
// a TCP client or a pseudo-terminal, and writes the ground truth. Bad input of
// any kind is reported as one message naming what was wrong and what was
// expected, with exit code 2; nothing is written before all input is checked.
#include <algorithm>
#include <csignal>
#include <fstream>
#include <iostream>
#include <optional>
#include <sstream>

#include <CLI/CLI.hpp>

#include "commands.hpp"
#include "links.hpp"
#include "material_file.hpp"
#include "port_link.hpp"
#include "presets.hpp"
#include "replay.hpp"
#include "run.hpp"
#include "truth.hpp"
#include "truth_json.hpp"

using namespace tensile;
using namespace tensile::sim;

namespace {

constexpr int bad_input = 2;

int refuse(const std::string& message) {
    std::cerr << "tensile-sim: " << message << "\n";
    return bad_input;
}

void list_materials() {
    for (const PresetText& p : preset_texts()) {
        const auto file = parse_material(p.toml, "preset " + std::string(p.name));
        if (!file) { std::cout << p.name << "  (broken preset: " << file.error() << ")\n"; continue; }
        const auto curve = make_curve(file->material);
        const auto geometry = check(file->specimen);
        if (!curve || !geometry) { std::cout << p.name << "  (broken preset)\n"; continue; }
        const MaterialTruth t = compute_truth(*curve, *geometry);
        std::cout << file->material.name << "  " << name_of(file->material.law);
        char line[160];
        if (t.ReH_MPa) std::snprintf(line, sizeof line, "  ReH %.0f MPa", *t.ReH_MPa);
        else std::snprintf(line, sizeof line, "  Rp0.2 %.0f MPa", t.Rp02_MPa.value_or(0));
        std::cout << line;
        std::snprintf(line, sizeof line, "  Rm %.0f MPa  A %.0f %%  S0 %.1f mm2  L0 %.1f mm  ", t.Rm_MPa, t.A_pct, t.S0_mm2, t.L0_mm);
        std::cout << line << file->material.description << "\n";
    }
}

std::optional<std::string> line_end_of(const std::string& name) {
    if (name == "lf") return "\n";
    if (name == "crlf") return "\r\n";
    if (name == "cr") return "\r";
    return std::nullopt;
}

}  // namespace

int main(int argc, char** argv) {
    std::signal(SIGPIPE, SIG_IGN);  // a reader that leaves is handled as a write error
    if (argc > 1 && std::string_view(argv[1]) == "replay") return tensile::sim::replay_main(argc - 1, argv + 1);
    CLI::App app{"tensile-sim: a virtual tensile-testing rig that streams our wire formats and writes the exact answers of the test it plays.\n"
                 "A simulation only: it is no interlock and no substitute for the frame's own limits and emergency stop."};
    app.set_version_flag("--version", std::string(TENSILED_VERSION));

    std::string material = "harbourline-s355-lot7";
    bool list = false;
    std::string format = "lines", out, tcp, truth_path, line_end = "lf";
    bool pty = false, fast = false, realtime = false;
    RunSettings rs;
    MachineConfig mc;
    SensorConfig sc;
    double switch_pct = 1.0, crosshead_mm_min = 0, load_cell_kN = 100;
    std::optional<double> ext_off_pct;
    std::vector<std::string> at_specs, fault_specs, link_specs;
    std::string control_spec;

    app.add_option("--material", material, "preset name or TOML material file (see --list-materials)");
    app.add_flag("--list-materials", list, "print the built-in presets, one per line, and exit");
    app.add_option("--format", format, "wire format: lines, keyvalue, binary or table")->capture_default_str();
    auto* o_out = app.add_option("--out", out, "write the stream to FILE ('-' for stdout, the default)");
    auto* o_tcp = app.add_option("--tcp", tcp, "serve the stream to one TCP client at a time on HOST:PORT (port 0: any free one)");
    auto* o_pty = app.add_flag("--pty", pty, "serve the stream on a pseudo-terminal; its path is the first line on stdout");
    auto* o_link = app.add_option("--link", link_specs,
                                  "channels on a connection of their own: CHANNELS[@RATE]=TARGET, TARGET being pty, "
                                  "tcp:HOST:PORT or file:PATH, e.g. force@1000=tcp:127.0.0.1:0 (repeatable)");
    app.add_option("--control", control_spec,
                   "a command port beside the stream: tcp:HOST:PORT, pty, or pty:LINK (a pty with LINK, a symbolic "
                   "link re-pointed at it, as a stable name across restarts); commands there are answered there "
                   "(the way to command a binary stream)");
    o_out->excludes(o_tcp)->excludes(o_pty)->excludes(o_link);
    o_tcp->excludes(o_pty)->excludes(o_link);
    o_pty->excludes(o_link);
    auto* o_fast = app.add_flag("--fast", fast, "generate as fast as the reader takes (the default)");
    auto* o_rt = app.add_flag("--realtime", realtime, "pace by the wall clock");
    o_fast->excludes(o_rt);
    app.add_option("--speed", rs.speed, "with --realtime: simulated seconds per wall second")->check(CLI::Range(0.001, 1000.0));
    app.add_option("--rate", rs.rate_hz, "samples per second")->check(CLI::Range(1.0, 1000000.0))->capture_default_str();
    app.add_option("--seed", rs.seed, "random seed; the same seed gives the same bytes")->capture_default_str();
    app.add_option("--truth", truth_path, "write the ground truth JSON to FILE");
    app.add_option("--line-end", line_end, "text line end: lf, crlf or cr")->capture_default_str();
    app.add_option("--strain-rate", mc.strain_rate_per_s, "strain rate 1/s until the switch (ISO 6892-1 Method A range 2)")->capture_default_str();
    app.add_option("--switch-at-pct", switch_pct, "strain in % where control switches to crosshead speed")->capture_default_str();
    app.add_option("--crosshead-speed", crosshead_mm_min, "crosshead speed after the switch, mm/min (0: range 4 over Lc)")->capture_default_str();
    app.add_option("--compliance", mc.compliance_mm_per_kN, "frame and grip compliance, mm/kN")->capture_default_str();
    app.add_option("--load-cell-kN", load_cell_kN, "load cell capacity, kN")->capture_default_str();
    app.add_option("--force-class", sc.force_class, "load cell class (ISO 7500-1): 0.5, 1, 2, 3")->capture_default_str();
    app.add_option("--extensometer-class", sc.extensometer_class, "extensometer class (ISO 9513): 0.2, 0.5, 1, 2")->capture_default_str();
    app.add_option("--extensometer-travel", sc.extensometer_travel_mm, "extensometer travel limit, mm (0: half of L0)")->capture_default_str();
    app.add_option("--extensometer-off-at-pct", ext_off_pct, "take the extensometer off at this strain in %");
    app.add_option("--at", at_specs, "scheduled command SECONDS:COMMAND, e.g. 30:hold (repeatable)");
    app.add_option("--fault", fault_specs, "fault KIND@START[+DURATION][:PARAM] (repeatable; see simulator/README.md)");
    app.add_option("--after-end", rs.after_end_s, "seconds streamed after fracture or stop")->check(CLI::Range(0.0, 60.0))->capture_default_str();
    app.add_option("--max-time", rs.max_time_s, "simulated seconds after which the run ends regardless")->check(CLI::Range(0.001, 1e6))->capture_default_str();

    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        if (e.get_exit_code() == 0) return app.exit(e);
        return refuse(std::string(e.what()) + " (see --help)");
    }
    if (list) {
        list_materials();
        return 0;
    }

    const auto fmt = parse_format(format);
    if (!fmt) return refuse("--format '" + format + "' is not a format; expected lines, keyvalue, binary or table");
    rs.format = *fmt;
    const auto eol = line_end_of(line_end);
    if (!eol) return refuse("--line-end '" + line_end + "'; expected lf, crlf or cr");
    rs.line_end = *eol;
    rs.realtime = realtime;
    if (o_out->count() == 0 && o_tcp->count() == 0 && !pty) out = "-";

    auto file = resolve_material(material);
    if (!file) return refuse(file.error());
    auto curve = make_curve(file->material);
    if (!curve) return refuse(curve.error());
    auto geometry = check(file->specimen);
    if (!geometry) return refuse("specimen of " + file->material.name + ": " + geometry.error());

    mc.switch_strain = switch_pct / 100;
    mc.crosshead_speed_mm_s = crosshead_mm_min / 60;
    auto machine = check(mc, *geometry);
    if (!machine) return refuse(machine.error());
    sc.load_cell_capacity_N = load_cell_kN * 1000;
    auto sensors = check(sc, *geometry);
    if (!sensors) return refuse(sensors.error());
    if (ext_off_pct) {
        if (!(*ext_off_pct > 0)) return refuse("--extensometer-off-at-pct must be a positive strain in %");
        rs.extensometer_off_strain = *ext_off_pct / 100;
    }
    for (const std::string& spec : at_specs) {
        const auto colon = spec.find(':');
        char* end = nullptr;
        const double when = colon == std::string::npos ? -1 : std::strtod(spec.c_str(), &end);
        if (colon == std::string::npos || end != spec.c_str() + colon || !(when >= 0))
            return refuse("--at '" + spec + "'; expected SECONDS:COMMAND, e.g. 30:hold");
        const std::string command = spec.substr(colon + 1);
        if (!parse_command(command).command)
            return refuse("--at '" + spec + "': unknown command '" + command + "'; expected hold, resume, stop, extensometer-off or ping");
        rs.schedule.push_back({when, command});
    }
    std::stable_sort(rs.schedule.begin(), rs.schedule.end(), [](const Scheduled& a, const Scheduled& b) { return a.time_s < b.time_s; });

    RunInputs in;
    in.curve = &*curve;
    in.truth = compute_truth(*curve, *geometry);
    in.geometry = *geometry;
    in.machine = *machine;
    in.sensors = *sensors;
    for (const std::string& spec : fault_specs) {
        auto f = parse_fault(spec);
        if (!f) return refuse(f.error());
        in.faults.push_back(*f);
    }

    std::ofstream truth_file;
    if (!truth_path.empty()) {
        truth_file.open(truth_path);
        if (!truth_file) return refuse("--truth: cannot open '" + truth_path + "' for writing");
    }
    std::vector<LinkSpec> links;
    for (const std::string& spec : link_specs) {
        auto l = parse_link(spec);
        if (!l) return refuse(l.error());
        links.push_back(*l);
    }
    if (const auto why = check_links(links)) return refuse(*why);
    if (!links.empty() && rs.format == Format::table)
        return refuse("--link with --format table: the table is one aligned frame per line; expected lines, keyvalue or binary");
    const bool control_pty = control_spec == "pty" || control_spec.substr(0, 4) == "pty:";
    if (!control_spec.empty() && !control_pty && control_spec.substr(0, 4) != "tcp:")
        return refuse("--control '" + control_spec + "'; expected tcp:HOST:PORT, pty or pty:LINK");
    if (control_spec == "pty:") return refuse("--control 'pty:': give the link's path after 'pty:'");

    // Every check is done: open the outputs, announcing each on stdout.
    std::vector<std::unique_ptr<Sink>> sinks;
    std::vector<LinkOut> outs;
    if (links.empty()) {
        Result<std::unique_ptr<Sink>> sink = Error{"no output"};
        if (!tcp.empty()) sink = open_tcp_sink(tcp, std::cout);
        else if (pty) sink = open_pty_sink(std::cout);
        else sink = open_file_sink(out);
        if (!sink) return refuse(sink.error());
        sinks.push_back(std::move(*sink));
        outs.push_back({all_channels, 0, {}, sinks.back().get(), ""});
    }
    for (std::size_t k = 0; k < links.size(); ++k) {
        const LinkSpec& l = links[k];
        const std::string option = "--link '" + l.spec + "'";
        const std::string label = channel_names(l.channels);
        std::ostringstream announced;
        Result<std::unique_ptr<Sink>> sink = Error{"no output"};
        switch (l.target) {
            case LinkTarget::tcp: sink = open_tcp_sink(l.where, announced, option, label); break;
            case LinkTarget::pty: sink = open_pty_sink(announced, option, label); break;
            case LinkTarget::file: sink = open_file_sink(l.where, option); announced << "file " << l.where << "\n"; break;
        }
        if (!sink) return refuse(sink.error());
        std::string target = announced.str();
        if (l.target != LinkTarget::file) std::cout << target << std::flush;
        target = target.substr(0, target.find('\n'));
        if (l.target != LinkTarget::file) target = target.substr(0, target.rfind(' '));  // drop the label
        sinks.push_back(std::move(*sink));
        outs.push_back({l.channels, l.rate_hz, clock_for(rs.seed, k), sinks.back().get(), target});
    }
    rs.separate_links = !links.empty();
    std::unique_ptr<Sink> control;
    std::optional<PortLink> control_link;
    if (control_pty) {
        std::ostringstream announced;  // "pty /dev/pts/N control"
        auto c = open_pty_sink(announced, "--control", "control");
        if (!c) return refuse(c.error());
        control = std::move(*c);
        if (control_spec.size() > 4) {
            const std::string line = announced.str();
            const std::string name = line.substr(4, line.find(' ', 4) - 4);
            auto link = PortLink::point(control_spec.substr(4), name);
            if (!link) return refuse("--control '" + control_spec + "': " + link.error());
            control_link.emplace(std::move(*link));
        }
        std::cout << announced.str() << std::flush;
    } else if (!control_spec.empty()) {
        auto c = open_tcp_sink(control_spec.substr(4), std::cout, "--control", "control");
        if (!c) return refuse(c.error());
        control = std::move(*c);
    }

    const RunRecord record = run_test(in, rs, std::move(outs), control.get());
    if (truth_file.is_open()) {
        truth_file << truth_json(in.truth, record).dump(2) << "\n";
        if (!truth_file) {
            std::cerr << "tensile-sim: could not write the truth file '" << truth_path << "'\n";
            return 1;
        }
    }
    return 0;
}
