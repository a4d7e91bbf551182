// tensilectl: the command-line side of tensiled. Offline tools work without a
// daemon; the daemon commands talk to a running tensiled (daemon_commands.hpp).
#include <CLI/CLI.hpp>
#include <iostream>

#include "analyze_command.hpp"
#include "daemon_commands.hpp"
#include "report_commands.hpp"
#include "verify_command.hpp"

int main(int argc, char** argv) {
    CLI::App app{"tensilectl: offline analysis and control for tensiled"};
    app.require_subcommand(1);
    app.set_version_flag("--version", std::string("tensilectl ") + TENSILED_VERSION);
    int exit_code = 0;
    tensile::ctl::add_analyze_command(app, exit_code);
    tensile::ctl::add_verify_command(app, exit_code);
    tensile::ctl::add_daemon_commands(app, exit_code);
    tensile::ctl::add_watch_command(app, exit_code);
    tensile::ctl::add_output_commands(app, exit_code);
    tensile::ctl::add_report_commands(app, exit_code);
    try {
        app.parse(argc, argv);
    } catch (const CLI::ParseError& e) {
        const int code = app.exit(e);
        return code == 0 ? 0 : 2;
    }
    return exit_code;
}
