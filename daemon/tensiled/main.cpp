// tensiled: the acquisition and monitoring daemon for one tensile-testing rig.
//
//   tensiled --config FILE        run a rig
//   tensiled --check-config FILE  validate a config and exit (0 good, 2 bad)
//   tensiled --demo               run the embedded demo rig (simulator child)
//
// Logs go to stdout (journald-friendly) and a rotating file in the data
// folder. SIGINT/SIGTERM finish what is in hand and exit cleanly. Bad config:
// one message naming the key, exit 2; nothing half-starts.
//
// tensiled is no interlock: the frame's own limits, guards and emergency stop
// stay in charge.
#include <CLI/CLI.hpp>
#include <boost/asio/io_context.hpp>
#include <boost/asio/post.hpp>
#include <boost/asio/ip/tcp.hpp>
#include <boost/asio/signal_set.hpp>
#include <algorithm>
#include <filesystem>
#include <functional>
#include <iostream>
#include <spdlog/sinks/rotating_file_sink.h>
#include <spdlog/sinks/stdout_sinks.h>
#include <spdlog/spdlog.h>

#include "config/daemon_config.hpp"
#include "daemon/monitor/monitor_server.hpp"
#include "demo_rig.hpp"
#include "rig_service.hpp"
#include "run_keeper.hpp"
#include "service_notifier.hpp"

namespace {

std::shared_ptr<spdlog::logger> make_logger(const std::filesystem::path& data_dir, const std::string& level) {
    std::vector<spdlog::sink_ptr> sinks{std::make_shared<spdlog::sinks::stdout_sink_mt>()};
    std::error_code ec;
    std::filesystem::create_directories(data_dir, ec);
    if (!ec)
        sinks.push_back(std::make_shared<spdlog::sinks::rotating_file_sink_mt>((data_dir / "tensiled.log").string(),
                                                                                5 * 1024 * 1024, 3));
    auto log = std::make_shared<spdlog::logger>("tensiled", sinks.begin(), sinks.end());
    log->set_level(spdlog::level::from_str(level));
    log->set_pattern("%Y-%m-%d %H:%M:%S.%e %^%l%$ %v");
    log->flush_on(spdlog::level::info);
    return log;
}

// A free loopback port for the demo's simulator.
std::uint16_t free_port() {
    boost::asio::io_context io;
    boost::asio::ip::tcp::acceptor a(io, {boost::asio::ip::address_v4::loopback(), 0});
    return a.local_endpoint().port();
}

int run_daemon(tensile::DaemonConfig config, bool demo, double demo_speed, std::size_t demo_runs,
               const std::vector<std::string>& demo_faults, double demo_fast_rate, const std::filesystem::path& self,
               bool monitor_port_given, bool demo_by_hand) {
    auto log = make_logger(config.data_dir, config.log_level);
    log->info("tensiled {} starting; rig '{}', data in {}", TENSILED_VERSION, config.rig.name, config.data_dir.string());
    log->warn("tensiled is no interlock: the frame's own limits, guards and emergency stop stay in charge");
    boost::asio::io_context io;
    // The recorder's alarms (database locked...) come from its writer thread;
    // they reach the live feed on the io_context thread once it is set below.
    std::function<void(const std::string&, const std::string&)> storage_alarm;
    tensile::RunKeeper keeper(
        config.data_dir / "tensiled.db", config.min_free_mb, log,
        [&io, &storage_alarm](const std::string& kind, const std::string& message) {
            boost::asio::post(io, [&storage_alarm, kind, message] {
                if (storage_alarm) storage_alarm(kind, message);
            });
        },
        12, config.max_database_mb);
    tensile::RigService rig(io, config, log);
    std::unique_ptr<tensile::DemoRig> demo_rig;
    if (demo) {
        const auto sim = self.parent_path() / "tensile-sim";
        const auto port = tensile::demo_data_port(config);
        // Our demo scenario's running order: the yield-point steel first.
        auto queue = tensile::list_demo_specimens(sim);
        std::stable_sort(queue.begin(), queue.end(), [](const auto& a, const auto& b) {
            return (a.material.find("s355") != std::string::npos) > (b.material.find("s355") != std::string::npos);
        });
        demo_rig = std::make_unique<tensile::DemoRig>(io, rig, sim, port, std::move(queue), demo_speed, demo_runs,
                                                      config.data_dir, log);
        demo_rig->inject(demo_faults);
        if (demo_fast_rate > 0) demo_rig->flat_out(demo_fast_rate);
        demo_rig->confirm_by_hand(demo_by_hand);
    }
    // Monitor (daemon/monitor): HTTP API, live feed, /metrics and the page.
    std::unique_ptr<tensile::monitor::MonitorServer> monitor_server;
    try {
        monitor_server = std::make_unique<tensile::monitor::MonitorServer>(io, config.monitor, config.data_dir, rig, keeper, log);
    } catch (const std::runtime_error& e) {
        // The demo's fixed port may be taken (another demo or a test beside it): any free port then.
        if (!demo || monitor_port_given) throw;
        log->warn("{}; the demo's monitor takes a free port instead", e.what());
        auto any_port = config.monitor;
        any_port.port = 0;
        monitor_server = std::make_unique<tensile::monitor::MonitorServer>(io, any_port, config.data_dir, rig, keeper, log);
    }
    auto& monitor = *monitor_server;
    auto& feed = monitor.feed();
    tensile::RigObservers observers;
    observers.may_arm = [&] { return keeper.writable(); };
    observers.on_armed = [&](const tensile::RunInfo& run) -> tensile::Result<bool> {
        if (auto kept = keeper.armed(run, rig.config().profiles.at(run.profile), rig.config().text); !kept) return kept;
        keeper.sources_at_arming(rig.acquisition().status());
        feed.armed(run, keeper.current_run());
        return true;
    };
    storage_alarm = [&](const std::string& kind, const std::string& message) { feed.alarm(kind, message); };
    observers.on_step = [&](const tensile::RunInfo& run, const tensile::RunOutput& out) {
        for (const auto& t : out.transitions)
            if (t.to == tensile::RunState::running) keeper.started(rig.controller());
        keeper.step(run, out);
        feed.step(run, out);
    };
    observers.on_raw = [&](const std::string& source, std::span<const std::byte> bytes, double arrival_s) {
        if (tensile::live(rig.state())) keeper.raw(source, bytes, arrival_s);
    };
    observers.on_alarm = [&](const std::string& kind, const std::string& message) {
        log->warn("alarm {}: {}", kind, message);
        keeper.alarm(kind, message);
        feed.alarm(kind, message);
        if (kind == "extensometer_alert" && demo_rig) demo_rig->on_extensometer_alert();
    };
    observers.on_run_end = [&](const tensile::RunInfo& run, tensile::RunState end, const tensile::Results& results) {
        log->info("run {} ended: {}", run.number, tensile::name_of(end));
        keeper.sources_at_end(rig.acquisition().status());
        feed.run_end(run, end, results);  // before the keeper forgets the stored id
        keeper.ended(run, end, results);
        if (demo_rig) demo_rig->on_run_end(run, end, results);
    };
    observers.on_idle_frame = [&](const tensile::drivers::AlignedFrame& f) { feed.idle_frame(f); };
    rig.observe(observers);

    tensile::ServiceNotifier service(io);
    boost::asio::signal_set signals(io, SIGINT, SIGTERM);
    signals.async_wait([&](const boost::system::error_code& ec, int signo) {
        if (ec) return;
        log->info("signal {}: finishing and exiting", signo);
        service.stopping();
        if (tensile::live(rig.state())) (void)rig.abort_run("daemon stopped by signal");
        rig.stop();
        monitor.stop();
        io.stop();
    });
    // SIGHUP: re-read the config; profiles take effect for the next run.
    boost::asio::signal_set hangup(io, SIGHUP);
    std::function<void()> wait_hangup = [&] {
        hangup.async_wait([&](const boost::system::error_code& ec, int) {
            if (ec) return;
            if (config.file.empty()) {
                log->warn("SIGHUP: the demo rig has no config file to re-read");
            } else {
                service.reloading();
                try {
                    const auto fresh = tensile::load_daemon_config(config.file);
                    if (auto r = rig.reload(fresh); r)
                        log->info("SIGHUP: profiles re-read from {}; sources and outputs change on restart only",
                                  config.file.string());
                    else
                        log->warn("SIGHUP: {}", r.error());
                } catch (const std::exception& e) {
                    log->error("SIGHUP: {} refused, the running config stays: {}", config.file.string(), e.what());
                }
                service.ready();
            }
            wait_hangup();
        });
    };
    wait_hangup();
    rig.start();
    monitor.start();
    // Tests and scripts read the address from this line.
    std::cout << "monitor http://" << config.monitor.listen << ':' << monitor.port() << "/\n" << std::flush;
    service.ready();
    if (service.watchdog_interval().count() > 0)
        log->info("systemd watchdog: pinging every {} ms", service.watchdog_interval().count() / 2000);
    if (demo_rig) {
        std::cout << "demo: the simulator plays Harbourline Metals specimens, data on 127.0.0.1:"
                  << tensile::demo_data_port(config) << ", commands on the serial line "
                  << tensile::demo_control_port(config.data_dir).string() << "; results print as each run ends. Ctrl-C to stop.\n"
                  << std::flush;
        demo_rig->start();
    }
    io.run();
    monitor.stop();
    keeper.stop();
    const auto [p50, p99] = rig.event_latency_p50_p99();
    log->info("event reaction time (bytes read to events out and requests handed to the outputs): p50 {:.3f} ms, "
              "p99 {:.3f} ms", 1000 * p50, 1000 * p99);
    log->info("tensiled stopped");
    return 0;
}

}  // namespace

int main(int argc, char** argv) {
    CLI::App app{"tensiled: acquisition and live monitoring for a tensile-testing rig"};
    std::string config_file, check_file;
    bool demo = false;
    double demo_speed = 1.0;
    std::size_t demo_runs = 0;
    std::vector<std::string> demo_faults;
    double demo_fast_rate = 0;
    bool demo_by_hand = false;
    std::string data_dir = "data/demo";
    int monitor_port = -1;  // -1: the config's (demo: 8470)
    auto* o_config = app.add_option("--config", config_file, "Rig config (TOML) to run");
    auto* o_check = app.add_option("--check-config", check_file, "Validate a config and exit");
    auto* o_demo = app.add_flag("--demo", demo, "Run the embedded demo rig (a simulator child process)");
    app.add_option("--demo-speed", demo_speed, "Demo: simulated seconds per wall second")->check(CLI::Range(0.1, 20.0));
    app.add_option("--demo-data", data_dir, "Demo: data folder")->capture_default_str();
    app.add_option("--demo-fault", demo_faults, "Demo: a fault for the simulator to inject, KIND@START[+DURATION][:PARAM]");
    app.add_option("--demo-flat-out", demo_fast_rate,
                   "Demo (benchmarks): the simulator streams as fast as read, at this sample rate in Hz")
        ->check(CLI::Range(1.0, 1e6));
    app.add_flag("--demo-confirm-by-hand", demo_by_hand,
                 "Demo: leave the extensometer hand-over to you (confirm on the page or with tensilectl)");
    app.add_option("--demo-runs", demo_runs, "Demo: stop after this many specimens (0: play all, then keep serving)");
    app.add_option("--monitor-port", monitor_port, "Monitor port instead of the config's (0: any free port)")
        ->check(CLI::Range(0, 65535));
    o_config->excludes(o_check)->excludes(o_demo);
    o_check->excludes(o_demo);
    app.set_version_flag("--version", std::string("tensiled ") + TENSILED_VERSION);
    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        return app.exit(e) == 0 ? 0 : 2;
    }
    if (config_file.empty() && check_file.empty() && !demo) {
        std::cerr << "tensiled: give --config FILE, --check-config FILE or --demo\n";
        return 2;
    }
    tensile::DaemonConfig config;
    try {
        if (demo) {
            const auto dir = std::filesystem::absolute(data_dir);
            config = tensile::load_daemon_config_text(tensile::demo_config_text(dir, free_port(), 8470, demo_speed), dir);
            // The demo keeps its monitor token beside its database (created owner-only).
            config.monitor.token_file = dir / "monitor.token";
        } else {
            config = tensile::load_daemon_config(check_file.empty() ? config_file : check_file);
        }
    } catch (const tensile::drivers::ConfigError& e) {
        std::cerr << "tensiled: " << (check_file.empty() ? config_file : check_file) << ": " << e.what() << '\n';
        return 2;
    } catch (const std::exception& e) {
        std::cerr << "tensiled: " << e.what() << '\n';
        return 2;
    }
    if (monitor_port >= 0) config.monitor.port = static_cast<std::uint16_t>(monitor_port);
    if (!check_file.empty()) {
        std::cout << check_file << ": good (" << config.drivers.sources.size() << " sources, " << config.profiles.size()
                  << " profiles)\n";
        return 0;
    }
    try {
        const auto self = std::filesystem::canonical("/proc/self/exe");
        return run_daemon(std::move(config), demo, demo_speed, demo_runs, demo_faults, demo_fast_rate, self,
                          monitor_port >= 0, demo_by_hand);
    } catch (const std::exception& e) {
        std::cerr << "tensiled: " << e.what() << '\n';
        return 1;
    }
}
