// tensilectl commands that talk to a running tensiled through its API:
//   status, watch, arm, start, stop, abort, confirm-handover, runs, show RUN,
//   export RUN; and `ports`, which lists this machine's serial ports.
//   tare, outputs, output NAME: output_commands.cpp.
// Exit codes: 0 done, 1 the daemon refused (message printed), 2 bad command
// line, 3 no daemon at the address.
#pragma once

#include <CLI/CLI.hpp>

namespace tensile::ctl {

void add_daemon_commands(CLI::App& app, int& exit_code);
// watch: live view over the WebSocket feed (watch_command.cpp).
void add_watch_command(CLI::App& app, int& exit_code);
// tare, outputs, output NAME (output_commands.cpp).
void add_output_commands(CLI::App& app, int& exit_code);

}  // namespace tensile::ctl
