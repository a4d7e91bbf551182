// Fault matrix, config reload: SIGHUP while a run is armed is refused with a
// log line and changes nothing; after the run it takes the new profiles.
// Against the real tensiled with the no-frames rig of hardening_rig.hpp.
#include <catch2/catch.hpp>

#include <csignal>
#include <nlohmann/json.hpp>

#include "hardening/hardening_rig.hpp"
#include "monitor/daemon_fixture.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;

TEST_CASE("a config reload (SIGHUP) during a run is refused with a log line and taken after the run") {
    const auto dir = temp_dir("tensiled-hardening-reload");
    const auto config = write_hardening_config(dir);
    Daemon d({"--config", config.string()}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;
    const auto bearer = "Bearer " + read_token(dir);
    // The daemon's pid, by its config path (unique to this test's folder).
    const auto pid = std::stoi(run_command("pgrep -f -- 'tensile[d] --config " + config.string() + "'").out);
    REQUIRE(pid > 0);
    const auto profiles = [&] { return json::parse(http(p, "GET", "/api/v1/status").body)["profiles"]; };
    const auto log_has = [&](const std::string& text) { return d.output().find(text) != std::string::npos; };
    REQUIRE(profiles() == json({"plate", "sheet"}));

    const std::string arm =
        R"({"specimen": {"label": "HM-0420", "shape": "round", "diameter_mm": 10, "gauge_length_mm": 50}})";
    REQUIRE(http(p, "POST", "/api/v1/arm", arm, bearer).status == 200);
    std::ofstream(config, std::ios::app) << "[profile.wire]\nproof_offsets_pct = [0.2]\n";
    REQUIRE(::kill(pid, SIGHUP) == 0);
    CHECK(wait_for([&] { return log_has("config not reloaded: a run is armed"); }, 5));
    CHECK(profiles() == json({"plate", "sheet"}));
    CHECK(json::parse(http(p, "GET", "/api/v1/status").body)["state"] == "armed");  // the run goes on

    REQUIRE(http(p, "POST", "/api/v1/abort", "", bearer).status == 200);
    REQUIRE(::kill(pid, SIGHUP) == 0);
    CHECK(wait_for([&] { return log_has("SIGHUP: profiles re-read"); }, 5));
    CHECK(profiles() == json({"plate", "sheet", "wire"}));
    CHECK(d.stop() == 0);
    std::filesystem::remove_all(dir);
}
