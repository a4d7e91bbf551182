// The whole config of one tensiled process, read from one TOML file:
//
//   [daemon]   data_dir, log_level, min_free_mb, max_database_mb
//   [monitor]  listen, port, token_file
//   [rig]      name, master, commands, relay, max_wait_ms, stale_after_ms,
//              device_lost_limit_s
//   [run]      profile (the default profile's name)
//   [profile.<name>] analysis and control settings (see profile_config.hpp)
//   [source.<name>], [output.<name>]  the drivers' part (drivers/source_config.hpp)
//
// Relative paths are relative to the config file's folder. Loading checks
// everything before anything starts: unknown keys, wrong types and impossible
// values throw drivers::ConfigError with one message naming the key path and
// what was expected.
#pragma once

#include <filesystem>
#include <map>
#include <optional>
#include <string>

#include <toml++/toml.h>

#include "daemon/run/run_controller.hpp"
#include "drivers/aligner.hpp"
#include "drivers/source_config.hpp"

namespace tensile {

struct MonitorConfig {
    std::string listen = "127.0.0.1";
    std::uint16_t port = 8470;
    std::filesystem::path token_file;   // empty: no token (then only loopback, read-only mutations refused)
};

struct RigConfig {
    std::string name = "rig";
    drivers::AlignerConfig aligner;
    std::string commands_output;         // output that takes hold/resume/stop; empty = none
    std::string relay_output;            // output raised during the hand-over; empty = none
    double device_lost_limit_s = 30;
};

struct DaemonConfig {
    std::filesystem::path file;          // where it was read from
    std::filesystem::path data_dir;
    std::string log_level = "info";
    double min_free_mb = 200;
    double max_database_mb = 0;  // 0: no cap on the database file
    MonitorConfig monitor;
    RigConfig rig;
    std::map<std::string, RunSettings> profiles;
    std::string default_profile;
    drivers::DriversConfig drivers;
    std::string text;                    // the file as read, stored with every run
};

// Throws drivers::ConfigError (bad content) or std::runtime_error (unreadable file).
DaemonConfig load_daemon_config(const std::filesystem::path& file);
DaemonConfig load_daemon_config_text(const std::string& text, const std::filesystem::path& base_dir);

}  // namespace tensile
