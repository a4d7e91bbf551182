// Security checks against the real tensiled (tests/hardening/hardening_rig.hpp):
// every command endpoint refuses a missing or wrong token and takes the right
// one; oversized headers and bodies are refused or cut; a client dribbling
// its request byte by byte is cut after the server's 30 s request limit
// (daemon/monitor/shared_state.hpp) while others are still served; the
// database and token files are owner-only even when the daemon starts with
// umask 000. The expected statuses are HTTP's own meanings (RFC 9110: 401
// missing or bad credentials, 413 content too large, 431 header fields too
// large) and the monitor's README.
#include <catch2/catch.hpp>

#include <future>
#include <nlohmann/json.hpp>
#include <sys/stat.h>

#include "hardening/hardening_rig.hpp"
#include "hardening/raw_client.hpp"
#include "monitor/daemon_fixture.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {

const std::string arm_body =
    R"({"specimen": {"label": "HM-0417", "material": "S355 plate", "shape": "rectangular", "width_mm": 12.5,)"
    R"( "thickness_mm": 2.0, "gauge_length_mm": 50}, "profile": "sheet"})";

std::string state(std::uint16_t port) { return json::parse(http(port, "GET", "/api/v1/status").body)["state"]; }

unsigned mode_of(const std::filesystem::path& p) {
    struct stat st {};
    if (::stat(p.c_str(), &st) != 0) return 0xffff;
    return st.st_mode & 07777;
}

// Starts tensiled with the given umask (inherited by the child) and restores ours.
std::unique_ptr<Daemon> start_daemon(const std::filesystem::path& dir, mode_t mask) {
    const mode_t old = ::umask(mask);
    auto d = std::make_unique<Daemon>(std::vector<std::string>{"--config", write_hardening_config(dir).string()},
                                      dir / "out.log");
    ::umask(old);
    return d;
}

}  // namespace

TEST_CASE("every command endpoint refuses a missing or wrong token and takes the right one") {
    const auto dir = temp_dir("tensiled-hardening-token");
    auto d = start_daemon(dir, 022);
    INFO(d->output());
    REQUIRE(d->port != 0);
    const auto p = d->port;
    const auto token = read_token(dir);
    REQUIRE(token.size() == 64);  // 32 random bytes as hex (monitor README)

    // The endpoints that change the rig (daemon/monitor/api.hpp), with a body each accepts.
    const std::vector<std::pair<std::string, std::string>> commands = {
        {"/api/v1/arm", arm_body}, {"/api/v1/start", ""}, {"/api/v1/stop", ""},
        {"/api/v1/abort", R"({"cause": "grips"})"}, {"/api/v1/handover/confirm", ""}};
    std::string wrong_last = token;
    wrong_last.back() = wrong_last.back() == '0' ? '1' : '0';
    const std::vector<std::string> refused = {
        "",                                  // no header
        "Bearer " + wrong_last,              // one character off
        "Bearer " + token.substr(0, 63),     // a prefix of the right token
        "Bearer " + token + "0",             // the right token and one more
        "Bearer " + token.substr(0, 16),     // a short prefix
        "Basic " + token,                    // the right token, wrong scheme
        "bearer" + token,                    // no space
        token,                               // no scheme
        "Bearer  " + token,                  // two spaces
        "Bearer"};
    for (const auto& [path, body] : commands) {
        for (const auto& auth : refused) {
            INFO(path << " with Authorization '" << auth << "'");
            const auto a = http(p, "POST", path, body, auth);
            CHECK(a.status == 401);
            CHECK(state(p) == "idle");  // nothing happened
        }
        // The token in the query is for the WebSocket only (monitor README).
        INFO(path << "?token=...");
        CHECK(http(p, "POST", path + "?token=" + token, body).status == 401);
    }
    CHECK(state(p) == "idle");

    // Routes that might take commands one day: without a token they never succeed.
    for (const std::string name : {"tare", "output", "outputs", "zero", "hold", "resume", "reload", "config", "runs"}) {
        INFO("POST /api/v1/" << name);
        const auto a = http(p, "POST", "/api/v1/" + name, "{}");
        CHECK((a.status == 401 || a.status == 404 || a.status == 405));
    }

    // The right token: each command is taken (200) or refused for the run's
    // state (409), never for access.
    const auto bearer = "Bearer " + token;
    const auto armed = http(p, "POST", "/api/v1/arm", arm_body, bearer);
    INFO(armed.body);
    CHECK(armed.status == 200);
    CHECK(state(p) == "armed");
    CHECK(http(p, "POST", "/api/v1/start", "", bearer).status == 409);  // no frames: the tare is never taken
    CHECK(http(p, "POST", "/api/v1/handover/confirm", "", bearer).status == 409);
    CHECK(http(p, "POST", "/api/v1/abort", R"({"cause": "grips"})", bearer).status == 200);
    CHECK(state(p) != "armed");
    REQUIRE(http(p, "POST", "/api/v1/arm", arm_body, bearer).status == 200);
    CHECK(http(p, "POST", "/api/v1/stop", "", bearer).status == 200);  // an armed run may be stopped
    CHECK(state(p) != "armed");
    CHECK(d->stop() == 0);
    std::filesystem::remove_all(dir);
}

TEST_CASE("oversized headers and bodies are refused or cut, and the daemon keeps serving") {
    const auto dir = temp_dir("tensiled-hardening-size");
    auto d = start_daemon(dir, 022);
    INFO(d->output());
    REQUIRE(d->port != 0);
    const auto p = d->port;
    const auto bearer = "Bearer " + read_token(dir);

    // Refused: a 413/431/400 answer, or the connection cut without one.
    const auto refused_or_cut = [](RawClient& c, double seconds) {
        const auto s = c.read_for(seconds);
        INFO("received: " << c.received.substr(0, 200));
        return (c.status() == 413 || c.status() == 431 || c.status() == 400) ||
               (c.status() == 0 && s == RawClient::State::closed);
    };

    SECTION("a body over the 64 KiB limit, with and without a token") {
        for (const auto& auth : {bearer, std::string()}) {
            const std::string body(70 * 1024, ' ');
            RawClient c(p);
            c.send("POST /api/v1/arm HTTP/1.1\r\nHost: x\r\n" + (auth.empty() ? "" : "Authorization: " + auth + "\r\n") +
                   "Content-Length: " + std::to_string(body.size()) + "\r\n\r\n");
            c.send(body);  // may fail part way once the server has cut: fine
            CHECK(refused_or_cut(c, 10));
        }
    }
    SECTION("a Content-Length of 10 GB is refused from the header alone") {
        RawClient c(p);
        c.send("POST /api/v1/arm HTTP/1.1\r\nHost: x\r\nAuthorization: " + bearer +
               "\r\nContent-Length: 10000000000\r\n\r\n{");
        CHECK(refused_or_cut(c, 10));
        CHECK(c.status() == 413);
    }
    SECTION("a chunked body growing past the limit") {
        RawClient c(p);
        c.send("POST /api/v1/arm HTTP/1.1\r\nHost: x\r\nAuthorization: " + bearer +
               "\r\nTransfer-Encoding: chunked\r\n\r\n");
        const std::string chunk = "1000\r\n" + std::string(0x1000, 'a') + "\r\n";
        for (int i = 0; i < 20 && c.send(chunk); ++i) {
        }
        CHECK(refused_or_cut(c, 10));
    }
    SECTION("a header block over the 8 KiB limit") {
        RawClient c(p);
        c.send("GET /api/v1/status HTTP/1.1\r\nHost: x\r\nX-Filler: " + std::string(16 * 1024, 'f') + "\r\n\r\n");
        CHECK(refused_or_cut(c, 10));
    }
    SECTION("a target of 100 KiB") {
        RawClient c(p);
        c.send("GET /api/v1/runs?material=" + std::string(100 * 1024, 'm') + " HTTP/1.1\r\nHost: x\r\n\r\n");
        CHECK(refused_or_cut(c, 10));
    }
    SECTION("a number too large for a double in a command body is a 400, not the end of the daemon") {
        // Found by drivers/fuzz/fuzz_monitor_request: nlohmann's out_of_range
        // (not a parse_error) escaped the body parser and ended tensiled.
        for (const std::string body : {R"({"cause": 1e999})", R"({"specimen": {"width_mm": -1e400}})", "[1e309]"}) {
            INFO(body);
            const auto a = http(p, "POST", "/api/v1/arm", body, bearer);
            CHECK(a.status == 400);
            CHECK_THAT(json::parse(a.body)["error"].get<std::string>(), Catch::Contains("malformed JSON"));
        }
    }
    // Whatever was refused, the daemon is still there and nothing was armed.
    CHECK(state(p) == "idle");
    CHECK(d->stop() == 0);
    std::filesystem::remove_all(dir);
}

TEST_CASE("requests dribbled byte by byte are cut after the server's 30 s limit, and others are served meanwhile") {
    const auto dir = temp_dir("tensiled-hardening-loris");
    auto d = start_daemon(dir, 022);
    INFO(d->output());
    REQUIRE(d->port != 0);
    const auto p = d->port;

    // Eight slow clients: one byte of a never-ending header every 500 ms. The
    // limit is per request (daemon/monitor/shared_state.hpp: read_timeout
    // 30 s), so dribbling must not keep extending it.
    constexpr int slow = 8;
    const auto started = std::chrono::steady_clock::now();
    std::vector<std::future<double>> cut_after;
    for (int i = 0; i < slow; ++i)
        cut_after.push_back(std::async(std::launch::async, [p, started] {
            RawClient c(p);
            const std::string request = "GET /api/v1/status HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Slow: " + std::string(200, 'z');
            for (std::size_t at = 0;; ++at) {
                const double t = std::chrono::duration<double>(std::chrono::steady_clock::now() - started).count();
                if (t > 60) return t;  // never cut: the check below fails
                const bool sent = c.send(std::string(1, request[at % request.size()]));
                if (!sent || c.read_for(0.5) == RawClient::State::closed) return t;
            }
        }));
    // Meanwhile a normal client gets its answers.
    for (int i = 0; i < 5; ++i) {
        std::this_thread::sleep_for(std::chrono::seconds(2));
        CHECK(http(p, "GET", "/api/v1/status").status == 200);
    }
    for (auto& f : cut_after) {
        const double t = f.get();
        INFO("a slow client was cut after " << t << " s");
        CHECK(t > 25);  // not before the limit (less the slack of our own steps)
        CHECK(t < 40);  // and not much after it
    }
    CHECK(http(p, "GET", "/api/v1/status").status == 200);
    CHECK(d->stop() == 0);
    std::filesystem::remove_all(dir);
}

TEST_CASE("the database and the token file are owner-only even under umask 000") {
    const auto dir = temp_dir("tensiled-hardening-modes");
    {
        auto d = start_daemon(dir, 0);
        INFO(d->output());
        REQUIRE(d->port != 0);
        const auto bearer = "Bearer " + read_token(dir);
        // A run, so the database has been written through its WAL.
        REQUIRE(http(d->port, "POST", "/api/v1/arm", arm_body, bearer).status == 200);
        REQUIRE(http(d->port, "POST", "/api/v1/abort", "", bearer).status == 200);
        CHECK(mode_of(dir / "secret" / "monitor.token") == 0600);
        CHECK(mode_of(dir / "data" / "tensiled.db") == 0600);
        for (const char* side : {"tensiled.db-wal", "tensiled.db-shm", "tensiled.db-journal"})
            if (std::filesystem::exists(dir / "data" / side)) {
                INFO(side);
                CHECK(mode_of(dir / "data" / side) == 0600);
            }
        CHECK(d->stop() == 0);
    }
    // A database found with wider rights is narrowed at the next start.
    ::chmod((dir / "data" / "tensiled.db").c_str(), 0644);
    {
        auto d = start_daemon(dir, 0);
        INFO(d->output());
        REQUIRE(d->port != 0);
        CHECK(mode_of(dir / "data" / "tensiled.db") == 0600);
        CHECK(d->stop() == 0);
    }
    std::filesystem::remove_all(dir);
}
