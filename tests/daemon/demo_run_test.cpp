// The daemon end to end on the embedded demo rig: tensiled starts the real
// simulator as a child, reads it over loopback TCP through the drivers, runs
// each specimen with the extensometer hand-over (hold, removal, resume) and
// stop at fracture, and its results must match the simulator's ground truth
// (computed from the material model): Rp0.2 within 1 %, Rm within 0.5 %, E
// within 3 % (the annealed copper preset excepted, see below), Ag and A
// within 5 % relative.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <unistd.h>

#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {
double rel(const json& r, const json& t, const char* key) {
    return (r[key].get<double>() - t[key].get<double>()) / t[key].get<double>();
}
}  // namespace

TEST_CASE("the demo rig plays every preset live and the stored answers match the truth") {
    const auto dir = std::filesystem::temp_directory_path() / ("tensiled-demo-" + std::to_string(::getpid()));
    std::filesystem::remove_all(dir);
    const auto ran = run_command("timeout 240 " + bin("tensiled") + " --demo --demo-speed 20 --demo-runs 5 --demo-data " +
                                 dir.string());
    INFO(ran.out);
    REQUIRE(ran.code == 0);
    for (int n = 1; n <= 5; ++n) {
        const auto run = json::parse(std::ifstream(dir / ("demo-run-" + std::to_string(n) + ".json")));
        const auto truth = json::parse(std::ifstream(dir / ("demo-truth-" + std::to_string(n) + ".json")));
        const std::string material = run["material"];
        INFO(material << "\n" << run.dump(2));
        CHECK(run["state"] == "finished");
        // The annealed copper preset has no straight part above the noise (common
        // practice for such alloys): E is uncertain and Rp0.2 follows it, so 2 %.
        const bool soft = material.find("cu-annealed") != std::string::npos;
        CHECK(std::abs(rel(run, truth, "Rp0.2_MPa")) < (soft ? 0.02 : 0.01));
        CHECK(std::abs(rel(run, truth, "Rm_MPa")) < 0.005);
        CHECK(std::abs(rel(run, truth, "Ag_pct")) < 0.05);
        CHECK(std::abs(rel(run, truth, "A_pct")) < 0.05);
        if (!soft) CHECK(std::abs(rel(run, truth, "E_MPa")) < 0.03);
        if (truth.contains("ReH_MPa")) CHECK(std::abs(rel(run, truth, "ReH_MPa")) < 0.01);
        // The hand-over happened: strain at fracture came from the crosshead.
        CHECK(run["strain_source"]["At"] == "crosshead");
    }
    std::filesystem::remove_all(dir);
}

TEST_CASE("tensiled checks configs and refuses bad ones with exit code 2") {
    auto good = run_command(bin("tensiled") + " --check-config " + std::string(TENSILE_SOURCE_DIR) +
                            "/config/examples/bench-frame-serial.toml");
    CHECK(good.code == 0);
    CHECK_THAT(good.out, Catch::Contains("good"));

    const auto bad = std::filesystem::temp_directory_path() / ("tensiled-bad-" + std::to_string(::getpid()) + ".toml");
    std::ofstream(bad) << "[monitor]\nport = \"eighty\"\n";
    auto refused = run_command(bin("tensiled") + " --check-config " + bad.string());
    CHECK(refused.code == 2);
    CHECK_THAT(refused.out, Catch::Contains("monitor.port"));
    std::filesystem::remove(bad);

    auto missing = run_command(bin("tensiled") + " --config /nonexistent/rig.toml");
    CHECK(missing.code == 2);
    CHECK_THAT(missing.out, Catch::Contains("cannot read"));

    auto nothing = run_command(bin("tensiled"));
    CHECK(nothing.code == 2);
}
