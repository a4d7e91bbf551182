// The embedded demo rig; see demo_rig.hpp.
#include "demo_rig.hpp"

#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>

#include <algorithm>
#include <cstdio>
#include <fstream>
#include <cstring>
#include <iostream>
#include <sstream>
#include <stdexcept>

#include "daemon/offline/results_json.hpp"

extern char** environ;

namespace tensile {

std::vector<DemoSpecimen> list_demo_specimens(const std::filesystem::path& simulator) {
    const std::string cmd = "'" + simulator.string() + "' --list-materials";
    FILE* pipe = popen(cmd.c_str(), "r");
    if (!pipe) throw std::runtime_error("cannot run " + simulator.string());
    std::vector<DemoSpecimen> out;
    char line[1024];
    while (std::fgets(line, sizeof line, pipe)) {
        // "<name>  <law>  ...  S0 80.0 mm2  L0 80.0 mm  <description>"
        std::string text(line);
        DemoSpecimen s;
        std::istringstream in(text);
        in >> s.material;
        const auto s0 = text.find(" S0 "), l0 = text.find(" L0 ");
        if (s.material.empty() || s0 == std::string::npos || l0 == std::string::npos) continue;
        s.S0_mm2 = std::stod(text.substr(s0 + 4));
        s.L0_mm = std::stod(text.substr(l0 + 4));
        const auto mm = text.find(" mm ", l0 + 4);
        if (mm != std::string::npos) {
            s.description = text.substr(mm + 4);
            while (!s.description.empty() && (s.description.front() == ' ')) s.description.erase(0, 1);
            while (!s.description.empty() && (s.description.back() == '\n' || s.description.back() == ' '))
                s.description.pop_back();
        }
        out.push_back(s);
    }
    const int status = pclose(pipe);
    if (status != 0 || out.empty())
        throw std::runtime_error(simulator.string() + " --list-materials gave no presets; expected one line per preset");
    return out;
}

std::filesystem::path demo_control_port(const std::filesystem::path& data_dir) {
    return std::filesystem::absolute(data_dir) / "demo-frame-control";
}

std::uint16_t demo_data_port(const DaemonConfig& config) {
    for (const auto& s : config.drivers.sources)
        if (s.name == "frame") return static_cast<std::uint16_t>(s.tcp.port);
    throw std::runtime_error("demo config: no source named frame");
}

std::string demo_config_text(const std::filesystem::path& data_dir, std::uint16_t sim_port, std::uint16_t monitor_port,
                             double pace) {
    std::ostringstream t;
    t << "# The embedded demo rig: tensile-sim streams force, extension and crosshead on\n"
      << "# loopback TCP and takes the frame's commands (hold, resume, stop) on a serial\n"
      << "# line, a pseudo-terminal reached through a link it re-points at each start,\n"
      << "# as a frame controller's RS-232 port would be.\n"
      << "[daemon]\ndata_dir = \"" << data_dir.string() << "\"\n"
      << "[monitor]\nlisten = \"127.0.0.1\"\nport = " << monitor_port << "\n"
      << "[rig]\nname = \"demo-rig\"\ncommands = \"frame\"\n"
      << "[run]\nprofile = \"demo\"\n"
      << "[profile.demo]\nproof_offsets_pct = [0.2]\ntotal_extensions_pct = [0.5]\npreload_N = 20\nsettle_s = 1\n"
      << "  [profile.demo.handover]\n  when = \"after-yield\"\n  hold = true\n"
      << "[source.frame]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " << sim_port << "\n"
      << "retry_min_ms = 100\nretry_max_ms = 500\nformat = \"lines\"\ntime_field = 0\nclock_pace = " << pace << "\n"
      << "  [[source.frame.channel]]\n  name = \"force\"\n  unit = \"N\"\n  field = 1\n"
      << "  [[source.frame.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  field = 2\n"
      << "  [[source.frame.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  field = 3\n"
      << "[source.frame-commands]\nkind = \"serial\"\npath = \"" << demo_control_port(data_dir).string() << "\"\n"
      << "baud = 115200\nretry_min_ms = 100\nretry_max_ms = 500\nformat = \"control\"\n"
      << "[output.frame]\nkind = \"command\"\nsource = \"frame-commands\"\n";
    return t.str();
}

DemoRig::DemoRig(boost::asio::io_context& io, RigService& rig, std::filesystem::path simulator, std::uint16_t sim_port,
                 std::vector<DemoSpecimen> queue, double speed, std::size_t runs, std::filesystem::path data_dir,
                 std::shared_ptr<spdlog::logger> log)
    : io_(io),
      rig_(rig),
      simulator_(std::move(simulator)),
      sim_port_(sim_port),
      queue_(std::move(queue)),
      speed_(speed),
      runs_(runs),
      data_dir_(std::move(data_dir)),
      log_(std::move(log)),
      operator_(io),
      pause_(io),
      tare_watch_(io) {}

DemoRig::~DemoRig() {
    if (child_ > 0) {
        ::kill(child_, SIGTERM);
        ::waitpid(child_, nullptr, 0);
    }
}

void DemoRig::start() { play_next(); }

void DemoRig::play_next() {
    reap();
    if (next_ >= queue_.size()) {
        log_->info("demo: all {} specimens played; the daemon keeps serving (Ctrl-C to stop)", queue_.size());
        return;
    }
    const auto& s = queue_[next_++];
    Specimen specimen;
    specimen.shape = SectionShape::given_area;
    specimen.area_mm2 = s.S0_mm2;
    specimen.gauge_length_mm = s.L0_mm;
    specimen.label = s.material + " #" + std::to_string(next_);
    specimen.material = s.description;
    if (auto armed = rig_.arm(specimen, ""); !armed) {
        log_->error("demo: cannot arm {}: {}", specimen.label, armed.error());
        return;
    }
    spawn(s);
}

void DemoRig::spawn(const DemoSpecimen& s) {
    const std::string endpoint = "127.0.0.1:" + std::to_string(sim_port_);
    const std::string speed = std::to_string(speed_);
    // The frame waits, held, until the daemon has taken its tare, as an
    // operator arms first and then starts the frame.
    std::vector<std::string> args{simulator_.string(), "--material", s.material, "--tcp", endpoint, "--realtime",
                                  "--speed", speed, "--format", "lines", "--after-end", "2", "--at", "0:hold",
                                  "--control", "pty:" + demo_control_port(data_dir_).string(),
                                  "--truth", (data_dir_ / ("demo-truth-" + std::to_string(next_) + ".json")).string()};
    if (fast_rate_hz_ > 0) {
        // Replace the pacing: --fast at the given sample rate.
        args.erase(std::find(args.begin(), args.end(), "--realtime"), std::find(args.begin(), args.end(), "--format"));
        args.insert(args.end(), {"--fast", "--rate", std::to_string(fast_rate_hz_)});
    }
    for (const auto& f : faults_) {
        args.push_back("--fault");
        args.push_back(f);
    }
    std::vector<char*> argv;
    for (auto& a : args) argv.push_back(a.data());
    argv.push_back(nullptr);
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_addopen(&actions, 1, "/dev/null", O_WRONLY, 0);  // its 'tcp HOST:PORT' line
    // Nothing else of ours goes with it: an inherited listening socket would
    // keep the monitor's port taken after the daemon is gone.
    posix_spawn_file_actions_addclosefrom_np(&actions, 3);
    pid_t pid = -1;
    const int err = posix_spawn(&pid, simulator_.c_str(), &actions, nullptr, argv.data(), environ);
    posix_spawn_file_actions_destroy(&actions);
    if (err != 0) {
        log_->error("demo: cannot start {}: {}", simulator_.string(), std::strerror(err));
        return;
    }
    child_ = pid;
    log_->info("demo: specimen {} of {}: {} ({})", next_, queue_.size(), s.material, s.description);
    start_when_tared();
}

void DemoRig::start_when_tared() {
    tare_watch_.expires_after(std::chrono::milliseconds(20));
    tare_watch_.async_wait([this](const boost::system::error_code& ec) {
        if (ec) return;
        if (!rig_.controller().tare_taken()) return start_when_tared();
        log_->info("demo operator: tare taken, starting the frame");
        rig_.send_command("resume");
    });
}

void DemoRig::on_extensometer_alert() {
    if (by_hand_) {
        log_->info("demo: the frame holds until you confirm the extensometer is off (page or tensilectl confirm-handover)");
        return;
    }
    // The demo's operator takes a couple of seconds to unclip it.
    operator_.expires_after(std::chrono::milliseconds(static_cast<int>(2000 / std::max(speed_, 0.1))));
    operator_.async_wait([this](const boost::system::error_code& ec) {
        if (ec) return;
        log_->info("demo operator: extensometer off");
        rig_.send_command("extensometer-off");
    });
}

void DemoRig::on_run_end(const RunInfo& run, RunState end, const Results& results) {
    std::cout << "\n== run " << run.number << " " << run.specimen.label << ": " << name_of(end) << "\n"
              << results_text(results) << std::flush;
    auto j = to_json(results);
    j["state"] = name_of(end);
    j["material"] = queue_[run.number - 1].material;
    std::ofstream(data_dir_ / ("demo-run-" + std::to_string(run.number) + ".json")) << j.dump(2) << '\n';
    const bool last = runs_ > 0 && run.number >= runs_;
    pause_.expires_after(std::chrono::milliseconds(last ? 500 : 3000));
    pause_.async_wait([this, last](const boost::system::error_code& ec) {
        if (ec) return;
        if (last) {
            reap();
            log_->info("demo: {} runs played, stopping", runs_);
            io_.stop();
            return;
        }
        play_next();
    });
}

void DemoRig::reap() {
    if (child_ <= 0) return;
    // The simulator ends by itself shortly after the break (the pause before
    // the next specimen covers that); if not, it is told to.
    if (::waitpid(child_, nullptr, WNOHANG) == child_) {
        child_ = -1;
        return;
    }
    ::kill(child_, SIGTERM);
    ::waitpid(child_, nullptr, 0);
    child_ = -1;
}

}  // namespace tensile
