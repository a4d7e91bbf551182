// Every endpoint and error path of the monitor API against a real tensiled
// whose only source points at a port where nothing listens: the rig has no
// frames, so runs are armed, started and stopped by command alone and the
// answers do not depend on timing.
#include <catch2/catch.hpp>

#include <nlohmann/json.hpp>
#include <sys/stat.h>

#include "daemon_fixture.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {

const std::string token = "test-token-0123456789abcdef";
const std::string bearer = "Bearer " + token;

std::uint16_t closed_port() {
    boost::asio::io_context io;
    boost::asio::ip::tcp::acceptor a(io, {boost::asio::ip::address_v4::loopback(), 0});
    return a.local_endpoint().port();  // closed again when `a` goes away
}

std::filesystem::path write_config(const std::filesystem::path& dir) {
    {
        std::ofstream(dir / "token") << token << "\n";
        ::chmod((dir / "token").c_str(), 0600);
    }
    const auto file = dir / "rig.toml";
    std::ofstream(file) << "[daemon]\ndata_dir = \"" << dir.string() << "\"\n"
                        << "[monitor]\nlisten = \"127.0.0.1\"\nport = 0\ntoken_file = \"" << (dir / "token").string() << "\"\n"
                        << "[rig]\nname = \"bench-2\"\n[run]\nprofile = \"plate\"\n"
                        << "[profile.plate]\nproof_offsets_pct = [0.2]\n"
                        << "[profile.sheet]\nproof_offsets_pct = [0.2]\n"
                        << "[source.frame]\nkind = \"tcp\"\nhost = \"127.0.0.1\"\nport = " << closed_port() << "\n"
                        << "retry_min_ms = 100\nretry_max_ms = 500\nformat = \"lines\"\ntime_field = 0\n"
                        << "  [[source.frame.channel]]\n  name = \"force\"\n  unit = \"N\"\n  field = 1\n"
                        << "  [[source.frame.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  field = 2\n"
                        << "  [[source.frame.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  field = 3\n"
                        << "[output.frame]\nkind = \"command\"\nsource = \"frame\"\n";
    return file;
}

const std::string flat_specimen =
    R"({"specimen": {"label": "P-17", "material": "test plate", "shape": "rectangular", "width_mm": 12.5,)"
    R"( "thickness_mm": 2.0, "gauge_length_mm": 50}, "profile": "sheet"})";

}  // namespace

TEST_CASE("the API answers every endpoint and refuses what it should") {
    const auto dir = temp_dir("tensiled-api");
    Daemon d({"--config", write_config(dir).string()}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;

    SECTION("status and metrics are open on loopback") {
        auto s = http(p, "GET", "/api/v1/status");
        REQUIRE(s.status == 200);
        const auto j = json::parse(s.body);
        CHECK(j["state"] == "idle");
        CHECK(j["handover"] == "not_due");
        CHECK(j["run"].is_null());
        CHECK(j["sources"][0]["name"] == "frame");
        CHECK(j["profiles"] == json({"plate", "sheet"}));
        CHECK(j["recorder"]["frames_dropped"] == 0);
        // SQLite's own count of the heap it holds (sqlite3_memory_used, SQLite
        // C interface docs): the daemon has connections open, so it is above
        // zero, and never above its high-water mark.
        CHECK(j["memory"]["sqlite_bytes"].get<std::int64_t>() > 0);
        CHECK(j["memory"]["sqlite_bytes"].get<std::int64_t>() <= j["memory"]["sqlite_peak_bytes"].get<std::int64_t>());

        auto m = http(p, "GET", "/metrics");
        REQUIRE(m.status == 200);
        CHECK_THAT(m.content_type, Catch::StartsWith("text/plain; version=0.0.4"));
        // Prometheus text format: every sample line is `name{labels} value`, each
        // metric announced by # HELP and # TYPE (the exposition format's rules).
        std::istringstream lines(m.body);
        std::string line;
        const std::regex sample(R"(^[a-zA-Z_:][a-zA-Z0-9_:]*(\{[a-zA-Z_][a-zA-Z0-9_]*="[^"]*"(,[a-zA-Z_][a-zA-Z0-9_]*="[^"]*")*\})? -?[0-9.e+-]+$)");
        int samples = 0;
        while (std::getline(lines, line)) {
            if (line.rfind("# HELP ", 0) == 0 || line.rfind("# TYPE ", 0) == 0) continue;
            INFO(line);
            CHECK(std::regex_match(line, sample));
            ++samples;
        }
        CHECK(samples > 10);
        CHECK_THAT(m.body, Catch::Contains("tensiled_run_state{state=\"idle\"} 1"));
        CHECK_THAT(m.body, Catch::Contains("tensiled_disk_free_bytes "));
        CHECK_THAT(m.body, Catch::Contains("tensiled_recorder_queue_depth "));
    }

    SECTION("the page and its chart library are served from the daemon") {
        auto page = http(p, "GET", "/");
        CHECK(page.status == 200);
        CHECK_THAT(page.content_type, Catch::StartsWith("text/html"));
        CHECK_THAT(page.body, Catch::Contains("no interlock"));
        CHECK(http(p, "GET", "/app.js").status == 200);
        CHECK(http(p, "GET", "/lib/chart.min.js").status == 200);
        CHECK(http(p, "POST", "/").status == 405);
    }

    SECTION("unknown paths, wrong methods and bad parameters") {
        CHECK(http(p, "GET", "/api/v1/nothing").status == 404);
        CHECK(http(p, "GET", "/elsewhere").status == 404);
        auto wrong = http(p, "DELETE", "/api/v1/status");
        CHECK(wrong.status == 405);
        CHECK(wrong.allow == "GET");
        CHECK(http(p, "GET", "/api/v1/start").status == 405);
        auto bad = http(p, "GET", "/api/v1/runs?state=done");
        CHECK(bad.status == 400);
        CHECK_THAT(json::parse(bad.body)["error"].get<std::string>(), Catch::Contains("'state'"));
        CHECK(http(p, "GET", "/api/v1/runs/99").status == 404);
        CHECK(http(p, "GET", "/api/v1/runs/abc").status == 404);
        CHECK(http(p, "GET", "/api/v1/runs/99/frames").status == 404);
        CHECK(http(p, "GET", "/api/v1/runs/99/export?format=csv").status == 404);
        CHECK(http(p, "GET", "/api/v1/runs/1/export?format=xml").status == 400);
        CHECK(http(p, "GET", "/api/v1/runs/1/frames?points=0").status == 400);
        // A body over the 64 KiB limit.
        CHECK(http(p, "POST", "/api/v1/arm", std::string(70 * 1024, ' '), bearer).status == 413);
    }

    SECTION("commands need the right token") {
        auto missing = http(p, "POST", "/api/v1/arm", flat_specimen);
        CHECK(missing.status == 401);
        CHECK_THAT(json::parse(missing.body)["error"].get<std::string>(), Catch::Contains("missing token"));
        auto wrong = http(p, "POST", "/api/v1/arm", flat_specimen, "Bearer not-the-token-at-all");
        CHECK(wrong.status == 401);
        CHECK_THAT(json::parse(wrong.body)["error"].get<std::string>(), Catch::Contains("wrong token"));
        CHECK(http(p, "POST", "/api/v1/start").status == 401);
        CHECK(http(p, "POST", "/api/v1/handover/confirm").status == 401);
        CHECK(http(p, "POST", "/api/v1/tare").status == 401);
        CHECK(http(p, "POST", "/api/v1/outputs/frame", R"({"send": "hold"})", "Bearer not-the-token-at-all").status == 401);
        CHECK(json::parse(http(p, "GET", "/api/v1/status").body)["state"] == "idle");
    }

    SECTION("bad specimens are refused with the field named") {
        auto malformed = http(p, "POST", "/api/v1/arm", "{\"specimen\": {", bearer);
        CHECK(malformed.status == 400);
        CHECK_THAT(json::parse(malformed.body)["error"].get<std::string>(), Catch::Contains("malformed JSON"));
        auto not_object = http(p, "POST", "/api/v1/arm", "[1,2]", bearer);
        CHECK(not_object.status == 400);
        auto no_specimen = http(p, "POST", "/api/v1/arm", "{}", bearer);
        CHECK(no_specimen.status == 400);
        CHECK_THAT(json::parse(no_specimen.body)["error"].get<std::string>(), Catch::Contains("'specimen'"));
        auto typed = http(p, "POST", "/api/v1/arm", R"({"specimen": {"shape": "rectangular", "width_mm": "wide"}})", bearer);
        CHECK(typed.status == 400);
        CHECK_THAT(json::parse(typed.body)["error"].get<std::string>(), Catch::Contains("width_mm"));
        auto shape = http(p, "POST", "/api/v1/arm", R"({"specimen": {"shape": "hexagon"}})", bearer);
        CHECK(shape.status == 400);
        CHECK_THAT(json::parse(shape.body)["error"].get<std::string>(), Catch::Contains("hexagon"));
        auto zero = http(p, "POST", "/api/v1/arm", R"({"specimen": {"shape": "rectangular", "width_mm": 0, "thickness_mm": 2, "gauge_length_mm": 50}})", bearer);
        CHECK(zero.status == 400);
        auto profile = http(p, "POST", "/api/v1/arm",
                            R"({"specimen": {"shape": "area", "area_mm2": 20, "gauge_length_mm": 50}, "profile": "wire"})", bearer);
        CHECK(profile.status == 400);
        CHECK_THAT(json::parse(profile.body)["error"].get<std::string>(), Catch::Contains("plate, sheet"));
    }

    SECTION("a run by command: arm, start, stop, with 409 where the state does not fit") {
        CHECK(http(p, "POST", "/api/v1/start", "", bearer).status == 409);
        CHECK(http(p, "POST", "/api/v1/stop", "", bearer).status == 409);
        CHECK(http(p, "POST", "/api/v1/abort", "", bearer).status == 409);
        CHECK(http(p, "POST", "/api/v1/handover/confirm", "", bearer).status == 409);

        // No source connected: a tare would wait for frames that never come.
        auto tare = http(p, "POST", "/api/v1/tare", "", bearer);
        CHECK(tare.status == 409);
        CHECK_THAT(json::parse(tare.body)["error"].get<std::string>(), Catch::Contains("no source is connected"));
        // The rig's command output rides on a link that never connects: said at once, nothing sent.
        const auto outputs = json::parse(http(p, "GET", "/api/v1/outputs").body)["outputs"];
        REQUIRE(outputs.size() == 1);
        CHECK(outputs[0]["name"] == "frame");
        CHECK(outputs[0]["kind"] == "command");
        CHECK(outputs[0]["role"].is_null());  // [rig] commands does not name it
        auto output = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "hold"})", bearer);
        CHECK(output.status == 503);
        CHECK_THAT(json::parse(output.body)["error"].get<std::string>(), Catch::Contains("its link (source 'frame') is"));
        CHECK(http(p, "POST", "/api/v1/outputs/lamp", R"({"relay": "on"})", bearer).status == 404);

        auto armed = http(p, "POST", "/api/v1/arm", flat_specimen, bearer);
        INFO(armed.body);
        REQUIRE(armed.status == 200);
        const auto a = json::parse(armed.body);
        CHECK(a["state"] == "armed");
        const auto id = a["run_id"].get<int>();
        CHECK(http(p, "POST", "/api/v1/arm", flat_specimen, bearer).status == 409);

        const auto s = json::parse(http(p, "GET", "/api/v1/status").body);
        CHECK(s["state"] == "armed");
        // S0 = 12.5 mm × 2.0 mm = 25 mm² (rectangle area).
        CHECK(s["run"]["S0_mm2"].get<double>() == Approx(25.0));
        CHECK(s["run"]["profile"] == "sheet");

        // No frames reach this rig, so the tare never completes: start is refused.
        auto early = http(p, "POST", "/api/v1/start", "", bearer);
        CHECK(early.status == 409);
        CHECK_THAT(json::parse(early.body)["error"].get<std::string>(), Catch::Contains("tare"));
        CHECK(http(p, "POST", "/api/v1/handover/confirm", "", bearer).status == 409);
        CHECK(http(p, "POST", "/api/v1/abort", R"({"cause": 5})", bearer).status == 400);
        CHECK(http(p, "POST", "/api/v1/abort", R"({"cause": "grip slipped"})", bearer).status == 200);
        CHECK(http(p, "POST", "/api/v1/abort", "", bearer).status == 409);
        CHECK(http(p, "POST", "/api/v1/stop", "", bearer).status == 409);

        // The stored run, found by filters.
        REQUIRE(wait_for([&] { return json::parse(http(p, "GET", "/api/v1/runs?state=aborted").body)["count"] == 1; }, 5));
        auto list = json::parse(http(p, "GET", "/api/v1/runs?material=TEST%20PLATE&from=2000-01-01").body);
        REQUIRE(list["count"] == 1);
        CHECK(list["runs"][0]["id"] == id);
        CHECK(json::parse(http(p, "GET", "/api/v1/runs?to=2000-01-01").body)["count"] == 0);
        CHECK(json::parse(http(p, "GET", "/api/v1/runs?state=finished").body)["count"] == 0);

        auto shown = http(p, "GET", "/api/v1/runs/" + std::to_string(id));
        REQUIRE(shown.status == 200);
        const auto r = json::parse(shown.body);
        CHECK(r["state"] == "aborted");
        CHECK(r["specimen"]["label"] == "P-17");
        CHECK(r["specimen"]["S0_mm2"].get<double>() == Approx(25.0));
        CHECK(r["profile"].is_object());
        CHECK(r["states"].size() >= 2);
        CHECK(r["events"].is_array());
        CHECK(r["alarms"].is_array());
        CHECK(r.contains("strain_rate_compliance"));

        auto frames = http(p, "GET", "/api/v1/runs/" + std::to_string(id) + "/frames?points=50");
        CHECK(frames.status == 200);
        auto csv = http(p, "GET", "/api/v1/runs/" + std::to_string(id) + "/export?format=csv");
        CHECK(csv.status == 200);
        CHECK(csv.body == "time_s,force_N,extension_mm,crosshead_mm,stress_MPa,strain_pct\n");
        auto js = http(p, "GET", "/api/v1/runs/" + std::to_string(id) + "/export?format=json");
        CHECK(js.status == 200);
        CHECK(json::parse(js.body)["frames"]["time_s"].empty());

        // tensilectl against the same daemon.
        const auto ctl = bin("tensilectl") + " ";
        const auto at = " --address " + d.address();
        CHECK(run_command(ctl + "start" + at).code == 1);  // no token: refused
        const auto tf = " --token-file " + (dir / "token").string();
        auto arm = run_command(ctl + "arm --label Q-2 --diameter 10 --proportional 5.65" + at + tf);
        INFO(arm.out);
        CHECK(arm.code == 0);
        CHECK(run_command(ctl + "confirm-handover" + at + tf).code == 1);
        CHECK(run_command(ctl + "start" + at + tf).code == 1);  // tare not taken: 409
        CHECK(run_command(ctl + "abort --cause test" + at + tf).code == 0);
        auto bad = run_command(ctl + "arm --width 0 --thickness 2 --gauge-length 50" + at + tf);
        CHECK(bad.code == 1);
        CHECK_THAT(bad.out, Catch::Contains("width"));
        CHECK(run_command("TENSILED_TOKEN=" + token + " " + ctl + "abort" + at).code == 1);  // nothing live: 409
        auto runs = run_command(ctl + "runs --state aborted" + at);
        CHECK(runs.code == 0);
        CHECK_THAT(runs.out, Catch::Contains("Q-2"));
    }

    CHECK(d.stop() == 0);
    std::filesystem::remove_all(dir);
}

TEST_CASE("tensilectl says clearly when no daemon is running") {
    auto r = run_command(bin("tensilectl") + " status --address 127.0.0.1:" + std::to_string(closed_port()));
    CHECK(r.code == 3);
    CHECK_THAT(r.out, Catch::Contains("not running"));
    auto e = run_command("TENSILED_ADDRESS=127.0.0.1:" + std::to_string(closed_port()) + " " + bin("tensilectl") + " runs");
    CHECK(e.code == 3);
    auto ports = run_command(bin("tensilectl") + " ports");
    CHECK(ports.code == 0);
}
