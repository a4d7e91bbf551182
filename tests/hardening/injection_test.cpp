// SQL-like, path-like, quoted and non-ASCII strings against the real
// tensiled: as specimen labels and materials they are stored and returned
// byte for byte (API and CSV/JSON export), as API parameters they are refused
// or matched literally, and none of them changes anything else: every run
// stays listed, the database passes SQLite's integrity check, and no file
// outside the data folder is read or written. The strings are the classic
// probes of the OWASP testing guide (SQL injection, path traversal), from memory.
#include <catch2/catch.hpp>

#include <nlohmann/json.hpp>
#include <sqlite3.h>

#include "hardening/hardening_rig.hpp"
#include "monitor/daemon_fixture.hpp"

using namespace tensile::testing;
using nlohmann::json;

namespace {

const std::vector<std::string> probes = {
    "'; DROP TABLE runs;--",
    "\"; DELETE FROM runs WHERE 1=1; --",
    "x' OR '1'='1",
    "1; PRAGMA writable_schema=ON;",
    "%",
    "_",
    "../../etc/passwd",
    "..\\..\\windows\\win.ini",
    "/etc/shadow",
    "<script>alert(1)</script>",
    "quote \" and apostrophe ' and backslash \\",
    "Zugprobe \xc3\x98" "10 \xe2\x80\x93 Stahl \xf0\x9f\x94\xa9",  // Ø, en dash, an emoji (4-byte UTF-8)
    "\xd7\xa9\xd7\x9c\xd7\x95\xd7\x9d \xe2\x80\xae" "abc",           // right-to-left text and override
    "line one\nline two\ttabbed",
    "{{7*7}} ${HOME} $(id) `id`",
};

// Percent-encodes every byte outside [A-Za-z0-9-._~] (RFC 3986 unreserved).
std::string url_encode(const std::string& s) {
    std::string out;
    for (unsigned char ch : s) {
        if (std::isalnum(ch) || ch == '-' || ch == '.' || ch == '_' || ch == '~') {
            out += static_cast<char>(ch);
        } else {
            char buf[4];
            std::snprintf(buf, sizeof buf, "%%%02X", ch);
            out += buf;
        }
    }
    return out;
}

std::string arm_body(const std::string& label, const std::string& material) {
    return json{{"specimen", {{"label", label}, {"material", material}, {"shape", "round"}, {"diameter_mm", 10},
                              {"gauge_length_mm", 50}}}}
        .dump();
}

}  // namespace

TEST_CASE("hostile strings as specimen names and parameters are stored verbatim and do nothing else") {
    const auto dir = temp_dir("tensiled-hardening-strings");
    Daemon d({"--config", write_hardening_config(dir).string()}, dir / "out.log");
    INFO(d.output());
    REQUIRE(d.port != 0);
    const auto p = d.port;
    const auto bearer = "Bearer " + read_token(dir);

    // One run per probe, the probe as label and (prefixed) as material.
    std::vector<int> ids;
    for (const auto& probe : probes) {
        INFO("probe: " << probe);
        const auto armed = http(p, "POST", "/api/v1/arm", arm_body(probe, "mat " + probe), bearer);
        INFO(armed.body);
        REQUIRE(armed.status == 200);
        ids.push_back(json::parse(armed.body)["run_id"].get<int>());
        REQUIRE(http(p, "POST", "/api/v1/abort", json{{"cause", probe}}.dump(), bearer).status == 200);
    }
    const auto count = [&] { return json::parse(http(p, "GET", "/api/v1/runs?limit=1000").body)["count"].get<std::size_t>(); };
    REQUIRE(wait_for([&] { return count() == probes.size(); }, 10));

    for (std::size_t i = 0; i < probes.size(); ++i) {
        const auto& probe = probes[i];
        INFO("probe: " << probe);
        const auto id = std::to_string(ids[i]);
        const auto shown = http(p, "GET", "/api/v1/runs/" + id);
        REQUIRE(shown.status == 200);
        const auto r = json::parse(shown.body);
        CHECK(r["specimen"]["label"] == probe);
        CHECK(r["specimen"]["material"] == "mat " + probe);
        // The export carries the specimen too.
        const auto exported = http(p, "GET", "/api/v1/runs/" + id + "/export?format=json");
        REQUIRE(exported.status == 200);
        CHECK_THAT(exported.body, Catch::Contains(json(probe).dump()));

        // As a filter the probe matches literally: itself, and only runs whose
        // material contains it ('%' and '_' are no wildcards).
        const auto found = json::parse(http(p, "GET", "/api/v1/runs?limit=1000&material=" + url_encode(probe)).body);
        std::size_t expected = 0;
        for (const auto& other : probes)
            if (("mat " + other).find(probe) != std::string::npos) ++expected;
        CHECK(found["count"] == expected);
        bool self = false;
        for (const auto& run : found["runs"]) self = self || run["id"] == ids[i];
        CHECK(self);

        // As other parameters the probe is refused with the parameter named, and
        // as a run id or path it is simply not found.
        for (const std::string param : {"state", "from", "limit"}) {
            const auto a = http(p, "GET", "/api/v1/runs?" + param + "=" + url_encode(probe));
            CHECK(a.status == 400);
            CHECK_THAT(json::parse(a.body)["error"].get<std::string>(), Catch::Contains("'" + param + "'"));
        }
        CHECK(http(p, "GET", "/api/v1/runs/" + id + "/export?format=" + url_encode(probe)).status == 400);
        CHECK(http(p, "GET", "/api/v1/runs/" + id + "/frames?points=" + url_encode(probe)).status == 400);
        const auto as_id = http(p, "GET", "/api/v1/runs/" + url_encode(probe));
        CHECK((as_id.status == 404 || as_id.status == 400));
    }

    // Path traversal in the path itself: never a file from outside.
    for (const std::string target : {"/../../etc/passwd", "/%2e%2e/%2e%2e/etc/passwd", "/..%2f..%2fetc%2fpasswd",
                                     "/api/v1/../../../etc/passwd", "/lib/../../../../etc/passwd", "//etc/passwd"}) {
        INFO(target);
        const auto a = http(p, "GET", target);
        CHECK(a.status >= 400);
        CHECK_THAT(a.body, !Catch::Contains("root:"));
    }

    // Nothing was dropped or changed: every run is still there, in one piece.
    CHECK(count() == probes.size());
    CHECK(d.stop() == 0);
    // SQLite's own check of the file, on a connection of our own.
    sqlite3* db = nullptr;
    REQUIRE(sqlite3_open_v2((dir / "data" / "tensiled.db").c_str(), &db, SQLITE_OPEN_READONLY, nullptr) == SQLITE_OK);
    std::string integrity;
    std::int64_t runs = -1;
    sqlite3_exec(db, "PRAGMA integrity_check", [](void* out, int, char** v, char**) {
        *static_cast<std::string*>(out) += v[0] ? v[0] : "NULL";
        return 0;
    }, &integrity, nullptr);
    sqlite3_exec(db, "SELECT count(*) FROM runs", [](void* out, int, char** v, char**) {
        *static_cast<std::int64_t*>(out) = std::stoll(v[0]);
        return 0;
    }, &runs, nullptr);
    sqlite3_close(db);
    CHECK(integrity == "ok");
    CHECK(runs == static_cast<std::int64_t>(probes.size()));
    std::filesystem::remove_all(dir);
}
