// Access rules, target splitting, query parsing and the hub's drop counting,
// without sockets.
#include <catch2/catch.hpp>

#include "daemon/monitor/access.hpp"
#include "daemon/monitor/api_runs.hpp"
#include "daemon/monitor/live_hub.hpp"
#include "daemon/monitor/reply.hpp"

using namespace tensile::monitor;

TEST_CASE("tokens compare equal only when every byte and the length match") {
    CHECK(equal_constant_time("abcdef", "abcdef"));
    CHECK_FALSE(equal_constant_time("abcdef", "abcdeg"));
    CHECK_FALSE(equal_constant_time("abcdef", "abcde"));
    CHECK_FALSE(equal_constant_time("", "a"));
    CHECK(equal_constant_time("", ""));
}

TEST_CASE("loopback addresses are told from the others") {
    CHECK(is_loopback_address("127.0.0.1"));
    CHECK(is_loopback_address("127.1.2.3"));
    CHECK(is_loopback_address("::1"));
    CHECK(is_loopback_address("localhost"));
    CHECK_FALSE(is_loopback_address("0.0.0.0"));
    CHECK_FALSE(is_loopback_address("192.168.1.20"));
}

TEST_CASE("on loopback reads are open and mutations need the right token") {
    const auto a = Access::with_token(true, "0123456789abcdef0123");
    CHECK_FALSE(a.check("", false));
    REQUIRE(a.check("", true));
    CHECK(a.check("", true)->status == 401);
    CHECK_THAT(a.check("", true)->message, Catch::Contains("missing token"));
    CHECK_THAT(a.check("Bearer nope", true)->message, Catch::Contains("wrong token"));
    CHECK(a.check("Basic abc", true));
    CHECK_FALSE(a.check("Bearer 0123456789abcdef0123", true));
}

TEST_CASE("on another address every request needs the token") {
    const auto a = Access::with_token(false, "0123456789abcdef0123");
    CHECK(a.check("", false));
    CHECK(a.check("Bearer 0123456789abcdef012", false));
    CHECK_FALSE(a.check("Bearer 0123456789abcdef0123", false));
    CHECK_FALSE(a.check_token("0123456789abcdef0123", false));
}

TEST_CASE("without a token commands are refused and a public address will not start") {
    const auto none = Access::with_token(true, "");
    CHECK(none.check("Bearer anything", true));
    CHECK_FALSE(none.check("", false));
    CHECK_THROWS_WITH(Access("0.0.0.0", std::filesystem::path{}), Catch::Contains("token_file"));
}

TEST_CASE("a missing token file is created owner-only with a fresh token") {
    const auto file = std::filesystem::temp_directory_path() / ("tensiled-token-" + std::to_string(::getpid()));
    std::filesystem::remove(file);
    bool created = false;
    const auto token = load_or_create_token(file, created);
    CHECK(created);
    CHECK(token.size() == 64);
    const auto perms = std::filesystem::status(file).permissions();
    CHECK((perms & (std::filesystem::perms::group_all | std::filesystem::perms::others_all)) == std::filesystem::perms::none);
    CHECK(load_or_create_token(file, created) == token);
    CHECK_FALSE(created);
    std::filesystem::remove(file);
}

TEST_CASE("targets split into a path and decoded parameters") {
    std::string path;
    std::map<std::string, std::string> q;
    split_target("/api/v1/runs?material=s355%20plate&state=finished&x", path, q);
    CHECK(path == "/api/v1/runs");
    CHECK(q["material"] == "s355 plate");
    CHECK(q["state"] == "finished");
    CHECK(q.count("x") == 1);
}

TEST_CASE("run filters name the parameter that is wrong") {
    CHECK(parse_run_filter({{"from", "2024-03-01"}, {"state", "finished"}, {"material", "S355"}}));
    // 2024-03-01T00:00:00Z is 1709251200 s after the Unix epoch (date arithmetic, UTC).
    CHECK(*parse_run_filter({{"from", "2024-03-01"}})->from_unix_s == Approx(1709251200.0));
    CHECK_THAT(parse_run_filter({{"from", "yesterday"}}).error(), Catch::Contains("'from'"));
    CHECK_THAT(parse_run_filter({{"state", "done"}}).error(), Catch::Contains("'state'"));
    CHECK_THAT(parse_run_filter({{"limit", "0"}}).error(), Catch::Contains("'limit'"));
    CHECK_THAT(parse_run_filter({{"colour", "red"}}).error(), Catch::Contains("unknown parameter 'colour'"));
    CHECK_THAT(parse_frames_query({{"points", "abc"}}).error(), Catch::Contains("'points'"));
    CHECK_THAT(parse_frames_query({{"from", "5"}, {"to", "1"}}).error(), Catch::Contains("before"));
    CHECK_FALSE(parse_run_id("12x"));
    CHECK(*parse_run_id("12") == 12);
}

namespace {
struct FakeClient : LiveClient {
    std::size_t room;
    std::size_t got = 0;
    explicit FakeClient(std::size_t r) : room(r) {}
    bool deliver(const Message&) override { return ++got <= room; }
    void check_stall(double) override {}
};
}  // namespace

TEST_CASE("the hub hands one message to every client and skips those that left") {
    LiveHub hub;
    auto fast = std::make_shared<FakeClient>(1000);
    auto slow = std::make_shared<FakeClient>(2);
    REQUIRE(hub.join(fast));
    REQUIRE(hub.join(slow));
    for (int i = 0; i < 5; ++i) hub.broadcast(make_message("{}"));
    CHECK(fast->got == 5);
    CHECK(hub.messages() == 5);
    slow.reset();
    CHECK(hub.clients() == 1);
}
