// Two runs recorded once per test process by the demo daemon (real simulator,
// real drivers, 20x pace), shared by the tests of the tools that work on
// stored runs. Test-only.
#pragma once

#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <unistd.h>

#include "daemon/storage/store.hpp"
#include "support/process.hpp"

namespace tensile::testing {

inline const std::filesystem::path& recorded() {
    static const std::filesystem::path dir = [] {
        const std::filesystem::path d = std::filesystem::temp_directory_path() / ("tensiled-corpus-tools-" + std::to_string(::getpid()));
        std::filesystem::remove_all(d);
        const auto ran = run_command("timeout 120 " + bin("tensiled") + " --demo --demo-speed 20 --demo-runs 2 --demo-data " +
                                     d.string());
        INFO(ran.out);
        REQUIRE(ran.code == 0);
        return d;
    }();
    return dir;
}
inline std::filesystem::path db() { return recorded() / "tensiled.db"; }

inline std::string slurp(const std::filesystem::path& p) {
    std::ifstream in(p, std::ios::binary);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
}

inline storage::Store open_db() {
    storage::OpenOptions o;
    o.create = false;
    auto s = storage::Store::open(db().string(), o);
    REQUIRE(s);
    return std::move(*s);
}

}  // namespace tensile::testing
