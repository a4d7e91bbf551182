// Tare and outputs through the API and tensilectl, against a real tensiled
// reading a rig on a pseudo-terminal (fake_rig.hpp) whose values the test
// sets: the tare must equal the force the rig sent (the tare is the mean of
// the frames after the command, and every frame carried that force), commands
// reach the rig and its answers come back as the reply, and every refusal
// (token, bad body, unknown output, wrong state, rig refusal, no
// acknowledgement, relay on a port without modem lines) is a clear JSON error.
#include <catch2/catch.hpp>

#include <nlohmann/json.hpp>
#include <sys/stat.h>

#include "daemon_fixture.hpp"
#include "fake_rig.hpp"
#include "support/process.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {

const std::string token = "tare-token-9f8e7d6c5b4a";
const std::string bearer = "Bearer " + token;

std::filesystem::path write_config(const std::filesystem::path& dir, const std::string& pty) {
    {
        std::ofstream(dir / "token") << token << "\n";
        ::chmod((dir / "token").c_str(), 0600);
    }
    const auto file = dir / "rig.toml";
    std::ofstream(file) << "[daemon]\ndata_dir = \"" << dir.string() << "\"\n"
                        << "[monitor]\nlisten = \"127.0.0.1\"\nport = 0\ntoken_file = \"" << (dir / "token").string() << "\"\n"
                        << "[rig]\nname = \"bench-4\"\ncommands = \"frame\"\nrelay = \"lamp\"\n[run]\nprofile = \"strip\"\n"
                        << "[profile.strip]\nproof_offsets_pct = [0.2]\npreload_N = 20\nextensometer_range_mm = 1\n"
                        << "  [profile.strip.handover]\n  when = \"at-travel\"\n  travel_share = 0.5\n  hold = true\n"
                        << "[source.frame]\nkind = \"serial\"\npath = \"" << pty << "\"\n"
                        << "format = \"lines\"\ntime_field = 0\n"
                        << "  [[source.frame.channel]]\n  name = \"force\"\n  unit = \"N\"\n  field = 1\n"
                        << "  [[source.frame.channel]]\n  name = \"extension\"\n  unit = \"mm\"\n  field = 2\n"
                        << "  [[source.frame.channel]]\n  name = \"crosshead\"\n  unit = \"mm\"\n  field = 3\n"
                        << "[output.frame]\nkind = \"command\"\nsource = \"frame\"\nack_timeout_ms = 150\nretries = 1\n"
                        << "[output.lamp]\nkind = \"relay\"\nsource = \"frame\"\nline = \"rts\"\n";
    return file;
}

json status(std::uint16_t p) { return json::parse(http(p, "GET", "/api/v1/status").body); }
std::string error_of(const Answer& a) { return json::parse(a.body).value("error", ""); }

}  // namespace

TEST_CASE("tare and outputs: API and tensilectl against a rig on a pty") {
    const auto dir = temp_dir("tensiled-tare");
    FakeRig rig;
    rig.force_N = 37.5;
    rig.extension_mm = 0.01;
    rig.crosshead_mm = 1.25;
    Daemon d({"--config", write_config(dir, rig.path()).string()}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;
    REQUIRE(wait_for([&] { return status(p)["sources"][0]["state"] == "connected"; }, 5));
    rig.streaming = true;
    REQUIRE(wait_for([&] { return status(p)["sources"][0]["records"].get<int>() > 50; }, 5));

    // Mutations need the token: missing and wrong are refused, nothing changes.
    auto missing = http(p, "POST", "/api/v1/tare");
    CHECK(missing.status == 401);
    CHECK_THAT(error_of(missing), Catch::Contains("missing token"));
    CHECK(http(p, "POST", "/api/v1/tare", "", "Bearer wrong-token-wrong-token").status == 401);
    CHECK(http(p, "POST", "/api/v1/outputs/frame", R"({"send": "ping"})").status == 401);
    CHECK(http(p, "POST", "/api/v1/outputs/frame", R"({"send": "ping"})", "Bearer wrong-token-wrong-token").status == 401);
    CHECK(http(p, "POST", "/api/v1/outputs/nothing", R"({"send": "ping"})").status == 401);  // token before the name
    CHECK(rig.count("ping") == 0);
    CHECK(status(p)["tare"]["state"] == "none");
    CHECK(http(p, "GET", "/api/v1/tare").status == 405);
    CHECK(http(p, "GET", "/api/v1/outputs/frame").status == 405);

    SECTION("the readout zero between runs, then the run's tare taken again while armed") {
        CHECK(http(p, "POST", "/api/v1/tare", R"({"now": true})", bearer).status == 400);
        CHECK(http(p, "POST", "/api/v1/tare", "{", bearer).status == 400);
        auto zero = http(p, "POST", "/api/v1/tare", "", bearer);
        REQUIRE(zero.status == 200);
        CHECK(json::parse(zero.body)["scope"] == "readout");
        REQUIRE(wait_for([&] { return status(p)["tare"]["state"] == "taken"; }, 5));
        auto s = status(p);
        // Every frame carried 37.5 N, 0.01 mm and 1.25 mm: their mean is exact.
        CHECK(s["tare"]["force_N"].get<double>() == Approx(37.5).margin(1e-9));
        CHECK(s["tare"]["extension_mm"].get<double>() == Approx(0.01).margin(1e-9));
        CHECK(s["tare"]["crosshead_mm"].get<double>() == Approx(1.25).margin(1e-9));
        CHECK(s["values"]["tared"] == true);
        CHECK(s["values"]["force_N"].get<double>() == Approx(0).margin(1e-9));

        // Arming takes the run's own tare, whatever the readout zero was.
        rig.force_N = 52.0;
        // Frames stamped after the command make the tare; let the 37.5 N ones pass first.
        std::this_thread::sleep_for(std::chrono::milliseconds(100));
        auto armed = http(p, "POST", "/api/v1/arm",
                          R"({"specimen": {"label": "T-1", "shape": "area", "area_mm2": 20, "gauge_length_mm": 50}})", bearer);
        REQUIRE(armed.status == 200);
        REQUIRE(wait_for([&] { return status(p)["tare"]["state"] == "taken"; }, 5));
        CHECK(status(p)["tare"]["scope"] == "run");
        CHECK(status(p)["tare"]["force_N"].get<double>() == Approx(52.0).margin(1e-9));

        // The grips settle: the tare is taken again from the new force.
        rig.force_N = 41.25;
        std::this_thread::sleep_for(std::chrono::milliseconds(100));  // frames before the command carry 41.25 too
        auto again = http(p, "POST", "/api/v1/tare", "", bearer);
        REQUIRE(again.status == 200);
        CHECK(json::parse(again.body)["scope"] == "run");
        REQUIRE(wait_for([&] { return status(p)["tare"]["state"] == "taken"; }, 5));
        CHECK(status(p)["tare"]["force_N"].get<double>() == Approx(41.25).margin(1e-9));
        CHECK(status(p)["state"] == "armed");

        // Past the preload the run is running; its tare no longer moves.
        rig.force_N = 300.0;
        REQUIRE(wait_for([&] { return status(p)["state"] == "running"; }, 5));
        // Tared force: 300 − 41.25 = 258.75 N.
        REQUIRE(wait_for([&] { return status(p)["values"]["force_N"].is_number(); }, 5));
        CHECK(status(p)["values"]["force_N"].get<double>() == Approx(258.75).margin(1e-9));
        auto late = http(p, "POST", "/api/v1/tare", "", bearer);
        CHECK(late.status == 409);
        CHECK_THAT(error_of(late), Catch::Contains("running"));

        // tensilectl: refused without a token and while running; then finish.
        const auto ctl = bin("tensilectl") + " ";
        const auto at = " --address " + d.address();
        const auto tf = " --token-file " + (dir / "token").string();
        CHECK(run_command(ctl + "tare" + at).code == 1);
        auto ctl_late = run_command(ctl + "tare" + at + tf);
        CHECK(ctl_late.code == 1);
        CHECK_THAT(ctl_late.out, Catch::Contains("running"));
        CHECK(http(p, "POST", "/api/v1/stop", "", bearer).status == 200);
        // Arming forgot the readout zero taken before the run.
        CHECK(status(p)["tare"]["scope"] == "readout");
        CHECK(status(p)["tare"]["state"] == "none");
        CHECK(status(p)["values"]["tared"] == false);
        auto ctl_zero = run_command(ctl + "tare" + at + tf);
        CHECK(ctl_zero.code == 0);
        CHECK_THAT(ctl_zero.out, Catch::Contains("readout zero"));
    }

    SECTION("outputs: listed, commands acknowledged, refused, unanswered; relays; bad bodies") {
        auto list = http(p, "GET", "/api/v1/outputs");
        REQUIRE(list.status == 200);
        const auto outs = json::parse(list.body)["outputs"];
        REQUIRE(outs.size() == 2);
        CHECK(outs[0]["name"] == "frame");
        CHECK(outs[0]["kind"] == "command");
        CHECK(outs[1]["name"] == "lamp");
        CHECK(outs[1]["kind"] == "relay");
        CHECK(outs[1]["line"] == "rts");

        auto ping = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "ping"})", bearer);
        INFO(ping.body);
        REQUIRE(ping.status == 200);
        CHECK(json::parse(ping.body)["outcome"] == "acknowledged");
        CHECK(json::parse(ping.body)["reply"] == "#ok ping");
        CHECK(rig.count("ping") == 1);

        rig.refuse("stop");
        auto refused = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "stop"})", bearer);
        CHECK(refused.status == 502);
        CHECK_THAT(error_of(refused), Catch::Contains("#error stop refused by the test rig"));

        // No answer: sent once and resent once (retries = 1), then 504.
        rig.ignore("extensometer-off");
        auto silent = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "extensometer-off"})", bearer);
        CHECK(silent.status == 504);
        CHECK_THAT(error_of(silent), Catch::Contains("not done"));
        CHECK(rig.count("extensometer-off") == 2);

        auto unknown = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "launch"})", bearer);
        CHECK(unknown.status == 400);
        CHECK_THAT(error_of(unknown), Catch::Contains("'launch'") && Catch::Contains("hold, resume"));
        auto two_lines = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "ping\nstop"})", bearer);
        CHECK(two_lines.status == 400);
        CHECK(http(p, "POST", "/api/v1/outputs/frame", R"({"send": 3})", bearer).status == 400);
        auto typo = http(p, "POST", "/api/v1/outputs/frame", R"({"sned": "hold"})", bearer);
        CHECK(typo.status == 400);
        CHECK_THAT(error_of(typo), Catch::Contains("'sned'"));
        auto empty = http(p, "POST", "/api/v1/outputs/frame", "", bearer);
        CHECK(empty.status == 400);
        CHECK_THAT(error_of(empty), Catch::Contains("missing field 'send'"));
        CHECK(http(p, "POST", "/api/v1/outputs/frame", "[1]", bearer).status == 400);
        auto nowhere = http(p, "POST", "/api/v1/outputs/horn", R"({"send": "ping"})", bearer);
        CHECK(nowhere.status == 404);
        CHECK_THAT(error_of(nowhere), Catch::Contains("'horn'") && Catch::Contains("frame, lamp"));

        // A Linux pty has no modem lines: the rig's answer is a clear 502.
        auto lamp = http(p, "POST", "/api/v1/outputs/lamp", R"({"relay": "on"})", bearer);
        CHECK(lamp.status == 502);
        CHECK_THAT(error_of(lamp), Catch::Contains("relay 'lamp' not set on"));
        CHECK(http(p, "POST", "/api/v1/outputs/lamp", R"({"relay": "up"})", bearer).status == 400);
        auto wrong_kind = http(p, "POST", "/api/v1/outputs/lamp", R"({"send": "hold"})", bearer);
        CHECK(wrong_kind.status == 400);
        CHECK_THAT(error_of(wrong_kind), Catch::Contains("relay"));

        // tensilectl.
        rig.answer_all();
        const auto ctl = bin("tensilectl") + " ";
        const auto at = " --address " + d.address();
        const auto tf = " --token-file " + (dir / "token").string();
        auto listed = run_command(ctl + "outputs" + at);
        CHECK(listed.code == 0);
        CHECK_THAT(listed.out, Catch::Contains("lamp  relay on frame (rts)"));
        CHECK(run_command(ctl + "output frame --send ping" + at).code == 1);  // no token
        auto sent = run_command(ctl + "output frame --send ping" + at + tf);
        CHECK(sent.code == 0);
        CHECK_THAT(sent.out, Catch::Contains("acknowledged"));
        CHECK(rig.count("ping") == 2);
        CHECK(run_command(ctl + "output lamp --relay on" + at + tf).code == 1);
        CHECK(run_command(ctl + "output frame" + at + tf).code == 2);
        CHECK(run_command(ctl + "output frame --send ping --relay on" + at + tf).code == 2);
        auto absent = run_command(ctl + "output horn --send ping" + at + tf);
        CHECK(absent.code == 1);
        CHECK_THAT(absent.out, Catch::Contains("no output 'horn'"));
    }

    SECTION("while the extensometer is coming off, resume and the hand-over relay are refused") {
        CHECK(http(p, "POST", "/api/v1/arm",
                   R"({"specimen": {"label": "T-2", "shape": "area", "area_mm2": 20, "gauge_length_mm": 50}})", bearer)
                  .status == 200);
        REQUIRE(wait_for([&] { return status(p)["tare"]["state"] == "taken"; }, 5));
        rig.force_N = 500.0;
        REQUIRE(wait_for([&] { return status(p)["state"] == "running"; }, 5));
        // Tared extension 0.76 − 0.01 = 0.75 mm, past half the 1 mm travel.
        rig.extension_mm = 0.76;
        const bool waiting = wait_for([&] { return status(p)["handover"] == "waiting"; }, 5);
        INFO(status(p).dump());
        REQUIRE(waiting);
        REQUIRE(wait_for([&] { return rig.count("hold") == 1; }, 2));

        auto resume = http(p, "POST", "/api/v1/outputs/frame", R"({"send": "resume"})", bearer);
        CHECK(resume.status == 409);
        CHECK_THAT(error_of(resume), Catch::Contains("extensometer"));
        auto relay = http(p, "POST", "/api/v1/outputs/lamp", R"({"relay": "off"})", bearer);
        CHECK(relay.status == 409);
        CHECK(rig.count("resume") == 0);
        // hold stays allowed: it only makes the frame safer.
        CHECK(http(p, "POST", "/api/v1/outputs/frame", R"({"send": "hold"})", bearer).status == 200);

        CHECK(http(p, "POST", "/api/v1/handover/confirm", "", bearer).status == 200);
        REQUIRE(wait_for([&] { return rig.count("resume") == 1; }, 2));
        CHECK(http(p, "POST", "/api/v1/abort", "", bearer).status == 200);
    }

    CHECK(d.stop() == 0);
    std::filesystem::remove_all(dir);
}
