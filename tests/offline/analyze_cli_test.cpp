// `tensilectl analyze` as a user runs it: a recorded run written to a file,
// the real binary, its JSON read back; and bad input refused with exit code 2.
#include <catch2/catch.hpp>

#include <array>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <sys/wait.h>

#include "curve_maker.hpp"

using namespace tensile::testing;

namespace {
struct Ran {
    int code;
    std::string out;
};

Ran run(const std::string& args) {
    const std::string cmd = std::string(TENSILE_BIN_DIR) + "/tensilectl " + args + " 2>&1";
    FILE* pipe = popen(cmd.c_str(), "r");
    REQUIRE(pipe);
    std::string out;
    std::array<char, 4096> buf{};
    while (std::size_t n = std::fread(buf.data(), 1, buf.size(), pipe)) out.append(buf.data(), n);
    const int status = pclose(pipe);
    return {WIFEXITED(status) ? WEXITSTATUS(status) : -1, out};
}

std::string write_run(const std::string& name, const std::vector<tensile::Frame>& frames) {
    const auto path = std::filesystem::temp_directory_path() / name;
    std::ofstream out(path);
    out << "time_s,force_N,extension_mm,crosshead_mm\n";
    char line[160];
    for (const auto& f : frames) {
        std::snprintf(line, sizeof line, "%.6f,%.3f,%.6f,", f.time_s, f.force_N, f.extension_mm);
        out << line;
        if (f.has_crosshead()) out << f.crosshead_mm;
        out << '\n';
    }
    return path.string();
}
// 6061-T6-like (E 68.9 GPa, Rp0.2 276 MPa, Hill's n 12) at 200 Hz, class 0.5 noise.
std::vector<tensile::Frame> aluminium_like_run() {
    RigSettings rig;
    rig.rate_hz = 200;
    rig.fracture_strain = 0.25;
    rig.force_noise_share = 0.0005;
    rig.extension_noise_mm = 0.0003;
    return make_run(hill_curve(68900, 276, 12), rig);
}
}  // namespace

TEST_CASE("analyze reads a recorded run and reports Rp0.2 and Rm as JSON") {
    const auto path = write_run("tensiled-analyze-hill.csv", aluminium_like_run());
    const auto r = run("analyze " + path + " --width 20 --thickness 4 --gauge-length 80 --json");
    REQUIRE(r.code == 0);
    const auto j = nlohmann::json::parse(r.out);
    CHECK(j["S0_mm2"].get<double>() == Approx(80));
    // Hill-1944: Rp0.2 = σ0.2 (derived); 6061-T6 row for E and yield.
    CHECK(j["Rp0.2_MPa"].get<double>() == Approx(276).epsilon(0.01));
    CHECK(j["E_MPa"].get<double>() == Approx(68900).epsilon(0.02));
    CHECK(j["At_pct"].get<double>() == Approx(25).margin(0.2));
    CHECK(j["ReH_MPa"].is_null());
    std::filesystem::remove(path);
}

// The same test written as stress and strain (σ = F/S0, e = ΔL/L0, ISO 6892-1
// §3) must give the same answers as written in force and extension.
TEST_CASE("analyze gives the same results from a stress-strain table as from force and extension") {
    const auto frames = aluminium_like_run();
    const auto plain = write_run("tensiled-analyze-plain.csv", frames);
    const auto path = (std::filesystem::temp_directory_path() / "tensiled-analyze-stress.csv").string();
    {
        std::ofstream out(path);
        out << "Time (s),Stress (MPa),Strain (%)\n";
        char line[160];
        for (const auto& f : frames) {
            std::snprintf(line, sizeof line, "%.6f,%.9g,%.9g\n", f.time_s, f.force_N / 80.0, 100.0 * f.extension_mm / 80.0);
            out << line;
        }
    }
    const auto a = run("analyze " + plain + " --area 80 --gauge-length 80 --json");
    const auto b = run("analyze " + path + " --area 80 --gauge-length 80 --json");
    REQUIRE(a.code == 0);
    REQUIRE(b.code == 0);
    const auto ja = nlohmann::json::parse(a.out), jb = nlohmann::json::parse(b.out);
    for (const char* key : {"E_MPa", "Rp0.2_MPa", "Rm_MPa", "Ag_pct", "At_pct"})
        CHECK(jb[key].get<double>() == Approx(ja[key].get<double>()).epsilon(1e-5));
    const auto text = run("analyze " + path + " --area 80 --gauge-length 80");
    CHECK_THAT(text.out, Catch::Contains("force from the stress column"));
    std::filesystem::remove(plain);
    std::filesystem::remove(path);
}

TEST_CASE("analyze refuses bad input with a clear message and exit code 2") {
    const auto path = (std::filesystem::temp_directory_path() / "tensiled-analyze-bad.csv").string();
    std::ofstream(path) << "time_s,force_N,extension_mm\n0,1,0\n0.1,1.5x,0.001\n";
    auto r = run("analyze " + path + " --area 80 --gauge-length 80");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("line 3") && Catch::Contains("'1.5x'"));

    r = run("analyze " + path + " --gauge-length 80");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("cross-section"));

    r = run("analyze " + path + " --width 20 --thickness -4 --gauge-length 80");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("thickness"));

    r = run("analyze /nonexistent/run.csv --area 80 --gauge-length 80");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("cannot open"));

    const auto flat = (std::filesystem::temp_directory_path() / "tensiled-analyze-flat.csv").string();
    {
        std::ofstream out(flat);
        out << "time_s,force_N,extension_mm\n";
        for (int i = 0; i < 100; ++i) out << i * 0.01 << ",0.5," << i * 1e-4 << "\n";
    }
    r = run("analyze " + flat + " --area 80 --gauge-length 80");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("no rise in force"));
    std::filesystem::remove(flat);

    r = run("analyze " + path + " --area 80 --gauge-length 80 --modulus-window 100");
    CHECK(r.code == 2);
    CHECK_THAT(r.out, Catch::Contains("LOW:HIGH"));
    std::filesystem::remove(path);
}
