// `tensilectl verify`: re-checks stored runs with today's code (see
// daemon/verify/run_verifier.hpp) straight from the database file.
#pragma once

#include <CLI/CLI.hpp>

namespace tensile::ctl {

void add_verify_command(CLI::App& app, int& exit_code);

}  // namespace tensile::ctl
