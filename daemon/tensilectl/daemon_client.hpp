// tensilectl's side of the monitor API: where the daemon is (--address,
// TENSILED_ADDRESS, default 127.0.0.1:8470), the token (--token-file, or the
// token itself in TENSILED_TOKEN), and a small synchronous HTTP client on
// Beast with a 10 s limit per request.
//
// Error policy: nothing throws to the caller; a daemon that cannot be reached
// is a result with `reachable = false` and a message saying so.
#pragma once

#include <string>

#include <CLI/CLI.hpp>

namespace tensile::ctl {

// Exit codes shared by the daemon commands.
inline constexpr int exit_refused = 1;      // the daemon answered with an error
inline constexpr int exit_usage = 2;        // bad command line
inline constexpr int exit_unreachable = 3;  // no daemon at the address

struct DaemonTarget {
    std::string address;     // host:port
    std::string token_file;
    // Fills address and token from the flags, then the environment, then defaults.
    [[nodiscard]] std::string host() const;
    [[nodiscard]] std::string port() const;
    [[nodiscard]] std::string token() const;  // empty when none is given
};

// Adds --address and --token-file to a subcommand.
void add_target_options(CLI::App& cmd, DaemonTarget& target);

struct HttpAnswer {
    bool reachable = false;
    int status = 0;
    std::string body;
    std::string content_type;
    std::string error;  // when not reachable
};

HttpAnswer http_call(const DaemonTarget& target, const std::string& method, const std::string& path,
                     const std::string& body = "", bool with_token = false);

// Prints the failure (unreachable daemon, or the daemon's JSON error) to
// stderr and returns the exit code; 0 for a 2xx answer.
int report_failure(const DaemonTarget& target, const HttpAnswer& answer);

}  // namespace tensile::ctl
