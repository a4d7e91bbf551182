// `tensilectl analyze FILE`: offline analysis of a recorded run (the table CSV
// or a lab's own delimited export) through the same engine as live runs.
#pragma once

#include <CLI/CLI.hpp>

namespace tensile::ctl {

// Adds the subcommand to `app`; the returned flag tells main it was chosen.
void add_analyze_command(CLI::App& app, int& exit_code);

}  // namespace tensile::ctl
