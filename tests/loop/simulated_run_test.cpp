// The whole loop offline: the simulator plays each demo preset to a table
// file with its ground truth (computed from the material model, not by the
// engine), `tensilectl analyze` reads the file back, and the results must
// match the truth. Targets: Rp0.2 within 1 %, Rm within 0.5 %, E within 3 %.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <unistd.h>

#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {

struct Played {
    json truth;
    json results;
};

Played play_and_analyse(const std::string& material, const std::string& extra = "") {
    // Unique per process: ctest runs the cases of this file side by side.
    const auto dir = std::filesystem::temp_directory_path();
    const auto stem = "tensiled-loop-" + std::to_string(::getpid()) + "-" + material;
    const auto csv = (dir / (stem + ".csv")).string();
    const auto truth = (dir / (stem + ".json")).string();
    const auto sim = run_command(bin("tensile-sim") + " --material " + material + " --format table --fast --out " + csv +
                                 " --truth " + truth + " " + extra);
    REQUIRE(sim.code == 0);
    Played p;
    p.truth = json::parse(std::ifstream(truth));
    const auto analysed = run_command(bin("tensilectl") + " analyze " + csv + " --area " +
                                      std::to_string(p.truth["S0_mm2"].get<double>()) + " --gauge-length " +
                                      std::to_string(p.truth["L0_mm"].get<double>()) + " --json");
    REQUIRE(analysed.code == 0);
    p.results = json::parse(analysed.out);
    std::filesystem::remove(csv);
    std::filesystem::remove(truth);
    return p;
}

double rel(const json& r, const json& t, const char* key) {
    return (r[key].get<double>() - t[key].get<double>()) / t[key].get<double>();
}

}  // namespace

TEST_CASE("every continuous-yield preset is recovered from its recording") {
    for (const char* material : {"harbourline-6061t6-lot12", "harbourline-1018cd-lot3", "harbourline-dc04-lot5"}) {
        SECTION(material) {
            const auto p = play_and_analyse(material);
            INFO(p.results.dump(2));
            CHECK(std::abs(rel(p.results, p.truth, "Rp0.2_MPa")) < 0.01);
            CHECK(std::abs(rel(p.results, p.truth, "Rm_MPa")) < 0.005);
            CHECK(std::abs(rel(p.results, p.truth, "E_MPa")) < 0.03);
            CHECK(std::abs(rel(p.results, p.truth, "At_pct")) < 0.01);
            CHECK(std::abs(rel(p.results, p.truth, "Agt_pct")) < 0.04);  // flat top: a few % (see README)
            CHECK(p.results["ReH_MPa"].is_null());
        }
    }
}

TEST_CASE("the structural steel preset gives its yield point") {
    // EN10025-2: S355, ReH ≥ 355 MPa; the preset's values are demo data.
    const auto p = play_and_analyse("harbourline-s355-lot7");
    INFO(p.results.dump(2));
    CHECK(std::abs(rel(p.results, p.truth, "ReH_MPa")) < 0.01);
    CHECK(std::abs(rel(p.results, p.truth, "ReL_MPa")) < 0.01);
    CHECK(std::abs(p.results["Ae_pct"].get<double>() - p.truth["Ae_pct"].get<double>()) < 0.2);
    CHECK(std::abs(rel(p.results, p.truth, "Rm_MPa")) < 0.005);
    CHECK(std::abs(rel(p.results, p.truth, "E_MPa")) < 0.03);
    CHECK(std::abs(rel(p.results, p.truth, "n_value")) < 0.03);
}

TEST_CASE("the annealed copper preset: Rp0.2 right, and a poor modulus fit is said plainly") {
    // Common practice: annealed copper alloys have no clearly straight part
    // above the noise, so E from the curve is uncertain and must be flagged.
    const auto p = play_and_analyse("harbourline-cu-annealed-lot21");
    INFO(p.results.dump(2));
    CHECK(std::abs(rel(p.results, p.truth, "Rp0.2_MPa")) < 0.02);
    CHECK(std::abs(rel(p.results, p.truth, "Rm_MPa")) < 0.005);
    CHECK(p.results["Rp0.2_MPa"].get<double>() < 0.4 * p.results["Rm_MPa"].get<double>());
    if (p.results["E_r2"].get<double>() < 0.995) {
        bool flagged = false;
        for (const auto& w : p.results["warnings"]) flagged |= w.get<std::string>().find("modulus") != std::string::npos;
        CHECK(flagged);
    } else {
        CHECK(std::abs(rel(p.results, p.truth, "E_MPa")) < 0.03);
    }
}

TEST_CASE("noisier instruments still meet the targets") {
    // ISO7500-1 class 1 force, ISO9513 class 1 extensometer: the classes ISO
    // 6892-1 allows for Rp (from memory).
    const auto p = play_and_analyse("harbourline-6061t6-lot12", "--force-class 1 --extensometer-class 1 --seed 7");
    INFO(p.results.dump(2));
    CHECK(std::abs(rel(p.results, p.truth, "Rp0.2_MPa")) < 0.01);
    CHECK(std::abs(rel(p.results, p.truth, "Rm_MPa")) < 0.005);
    CHECK(std::abs(rel(p.results, p.truth, "E_MPa")) < 0.03);
}
