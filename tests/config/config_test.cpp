// The daemon config: the shipped examples load; each kind of mistake is
// refused with one message naming the key and what was expected.
#include <catch2/catch.hpp>

#include <filesystem>

#include "config/daemon_config.hpp"

using namespace tensile;

namespace {

const std::string minimal = R"(
[source.sim]
kind = "tcp"
host = "127.0.0.1"
port = 7700
format = "lines"
time_field = 0
  [[source.sim.channel]]
  name = "force"
  unit = "N"
  field = 1
)";

std::string error_of(const std::string& text) {
    try {
        (void)load_daemon_config_text(text, "/tmp");
    } catch (const drivers::ConfigError& e) {
        return e.what();
    }
    return "";
}

}  // namespace

TEST_CASE("every example config in config/examples loads") {
    int seen = 0;
    for (const auto& entry : std::filesystem::directory_iterator(std::string(TENSILE_SOURCE_DIR) + "/config/examples")) {
        if (entry.path().extension() != ".toml") continue;
        INFO(entry.path());
        const auto c = load_daemon_config(entry.path());
        CHECK_FALSE(c.drivers.sources.empty());
        CHECK(c.profiles.count(c.default_profile) == 1);
        ++seen;
    }
    CHECK(seen >= 1);
}

TEST_CASE("a minimal config gets the ISO 6892-1 defaults") {
    const auto c = load_daemon_config_text(minimal, "/srv/lab");
    CHECK(c.default_profile == "iso-6892-a");
    CHECK(c.data_dir == std::filesystem::path("/srv/lab/data"));
    CHECK(c.monitor.listen == "127.0.0.1");
    CHECK(c.monitor.port == 8470);
    CHECK(c.max_database_mb == 0);  // no cap unless asked for
    CHECK(load_daemon_config_text(minimal + "[daemon]\nmax_database_mb = 20000\n", "/srv/lab").max_database_mb == 20000);
    const auto& p = c.profiles.at("iso-6892-a").profile;
    // ISO6892-MethodA (from memory): range 2 = 0.00025 1/s ± 20 % in the elastic part.
    CHECK(p.rate_bands[0].max_per_s == Approx(0.00025 * 1.2));
    CHECK(p.proof_offsets_pct == std::vector<double>{0.2});
}

TEST_CASE("profiles and hand-over rules are read with their units") {
    const auto c = load_daemon_config_text(minimal + R"(
[run]
profile = "sheet"
[profile.sheet]
proof_offsets_pct = [0.2, 1.0]
modulus_window_MPa = [40, 160]
break_window_ms = 10
preload_N = 35
  [profile.sheet.handover]
  when = "at-strain"
  strain_pct = 4
  hold = false
)",
                                             "/tmp");
    const auto& s = c.profiles.at("sheet");
    CHECK(s.profile.proof_offsets_pct == std::vector<double>{0.2, 1.0});
    REQUIRE(s.profile.modulus_window);
    CHECK(s.profile.modulus_window->high_MPa == 160);
    CHECK(s.profile.break_window_s == Approx(0.01));
    CHECK(s.preload_N == 35);
    CHECK(s.handover.when == HandoverRule::When::at_strain);
    CHECK(s.handover.value == Approx(0.04));
    CHECK_FALSE(s.handover.hold_frame);
}

TEST_CASE("mistakes are refused with the key named and what was expected") {
    CHECK_THAT(error_of(minimal + "[daemon]\nlog_levle = \"info\"\n"), Catch::Contains("log_levle"));
    CHECK_THAT(error_of(minimal + "[monitor]\nport = 70000\n"), Catch::Contains("monitor.port") && Catch::Contains("65535"));
    CHECK_THAT(error_of(minimal + "[profile.a]\nproof_offsets_pct = 0.2\n"),
               Catch::Contains("profile.a.proof_offsets_pct") && Catch::Contains("list"));
    CHECK_THAT(error_of(minimal + "[profile.a]\nmodulus_window_MPa = [160, 40]\n"), Catch::Contains("low < high"));
    CHECK_THAT(error_of(minimal + "[profile.a.handover]\nwhen = \"at-strain\"\n"), Catch::Contains("strain_pct"));
    CHECK_THAT(error_of(minimal + "[profile.a.handover]\nwhen = \"sometimes\"\n"), Catch::Contains("after-yield"));
    CHECK_THAT(error_of(minimal + "[run]\nprofile = \"nope\"\n"), Catch::Contains("run.profile"));
    CHECK_THAT(error_of(minimal + "[rig]\ncommands = \"frame\"\n"), Catch::Contains("rig.commands"));
    CHECK_THAT(error_of(minimal + "[daemon]\nmax_database_mb = -5\n"), Catch::Contains("daemon.max_database_mb"));
    CHECK_THAT(error_of(minimal + "[oops]\n"), Catch::Contains("oops"));
    CHECK_THAT(error_of("[daemon\n"), Catch::Contains("line 1"));
    CHECK_THAT(error_of(""), Catch::Contains("source"));
}
