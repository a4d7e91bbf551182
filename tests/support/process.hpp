// Runs a command line the way a user would (through the shell) and returns
// its exit code with stdout and stderr together. Test-only.
#pragma once

#include <array>
#include <cstdio>
#include <string>
#include <sys/wait.h>

namespace tensile::testing {

struct Ran {
    int code = -1;
    std::string out;
};

inline Ran run_command(const std::string& command) {
    Ran ran;
    FILE* pipe = popen((command + " 2>&1").c_str(), "r");
    if (!pipe) return ran;
    std::array<char, 4096> buf{};
    while (std::size_t n = std::fread(buf.data(), 1, buf.size(), pipe)) ran.out.append(buf.data(), n);
    const int status = pclose(pipe);
    ran.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
    return ran;
}

inline std::string bin(const char* name) { return std::string(TENSILE_BIN_DIR) + "/" + name; }

}  // namespace tensile::testing
