// `tensilectl report` and `tensilectl summary`: reports on stored runs (see
// daemon/report/). Registered together so main.cpp needs one line.
#pragma once

#include <CLI/CLI.hpp>

namespace tensile::ctl {

void add_report_commands(CLI::App& app, int& exit_code);

}  // namespace tensile::ctl
