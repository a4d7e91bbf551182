// Verification end to end: the demo daemon records two runs; `tensilectl
// verify` passes on them untouched, names the right row when a stored result
// no longer matches what today's engine computes (as after an engine change
// that moves a result), and reports changed data when a stored byte or frame
// was altered in the database after the run closed.
#include <catch2/catch.hpp>

#include <filesystem>
#include <unistd.h>

#include "support/process.hpp"

using namespace tensile::testing;
namespace fs = std::filesystem;

namespace {

const fs::path& recorded() {
    static const fs::path dir = [] {
        const fs::path d = fs::temp_directory_path() / ("tensiled-verify-" + std::to_string(::getpid()));
        fs::remove_all(d);
        const auto ran = run_command("timeout 120 " + bin("tensiled") +
                                     " --demo --demo-speed 20 --demo-runs 2 --demo-data " + d.string());
        REQUIRE(ran.code == 0);
        // One file, so copies carry everything.
        REQUIRE(run_command("sqlite3 " + (d / "tensiled.db").string() + " 'PRAGMA wal_checkpoint(TRUNCATE);'").code == 0);
        return d;
    }();
    return dir;
}

fs::path copy_of(const std::string& name) {
    const auto to = recorded() / (name + ".db");
    fs::copy_file(recorded() / "tensiled.db", to, fs::copy_options::overwrite_existing);
    return to;
}

Ran sql(const fs::path& db, const std::string& statement) { return run_command("sqlite3 " + db.string() + " \"" + statement + "\""); }
Ran verify(const fs::path& db, const std::string& args) {
    return run_command(bin("tensilectl") + " verify --db " + db.string() + " " + args);
}

}  // namespace

TEST_CASE("untouched runs verify identical, and each check is filed") {
    const auto db = copy_of("untouched");
    const auto r = verify(db, "--all");
    INFO(r.out);
    CHECK(r.code == 0);
    CHECK_THAT(r.out, Catch::Contains("run 1: identical") && Catch::Contains("run 2: identical") &&
                          Catch::Contains("2 of 2 runs passed"));
    CHECK_THAT(r.out, Catch::Contains("frames re-parsed from raw bytes"));
    const auto filed = sql(db, "SELECT count(*), min(outcome) FROM verifications;");
    CHECK_THAT(filed.out, Catch::Contains("2|identical"));
}

TEST_CASE("a result that today's engine no longer gives is a mismatch on its row") {
    const auto db = copy_of("moved");
    REQUIRE(sql(db, "UPDATE runs SET results = json_set(results, '$.Rm_MPa', json_extract(results, '$.Rm_MPa') + 1.5) "
                    "WHERE id = 2;")
                .code == 0);
    const auto r = verify(db, "2");
    INFO(r.out);
    CHECK(r.code == 1);
    CHECK_THAT(r.out, Catch::Contains("run 2: mismatch") && Catch::Contains("DIFF Rm_MPa"));
    CHECK_THAT(r.out, Catch::Contains("integrity (SHA-256 of raw bytes and frames): unchanged"));
    CHECK(verify(db, "1").code == 0);  // the other run is untouched

    // A difference far below the given tolerance passes as such.
    const auto tiny = copy_of("tiny");
    REQUIRE(sql(tiny, "UPDATE runs SET results = json_set(results, '$.Rm_MPa', json_extract(results, '$.Rm_MPa') * "
                      "(1 + 1e-9)) WHERE id = 2;")
                .code == 0);
    CHECK(verify(tiny, "2").code == 1);
    const auto within = verify(tiny, "2 --tolerance 1e-6");
    CHECK(within.code == 0);
    CHECK_THAT(within.out, Catch::Contains("within tolerance"));
}

TEST_CASE("stored data altered after the run closed is reported as changed") {
    const auto bytes = copy_of("bytes");
    // One byte of a raw chunk of run 1 is changed to another value. (Not a
    // text replace: a packed chunk need not hold any given character.)
    REQUIRE(sql(bytes, "UPDATE raw_chunks SET bytes = CAST(substr(bytes, 1, 20) || "
                       "CASE WHEN substr(bytes, 21, 1) = X'41' THEN X'42' ELSE X'41' END || substr(bytes, 22) AS BLOB) "
                       "WHERE id = (SELECT min(id) FROM raw_chunks WHERE run_id = 1 AND source = 'frame');")
                .code == 0);
    auto r = verify(bytes, "1");
    INFO(r.out);
    CHECK(r.code == 1);
    CHECK_THAT(r.out, Catch::Contains("run 1: data changed") && Catch::Contains("CHANGED"));

    const auto frames = copy_of("frames");
    // One chunk of frames of run 1 is replaced by its neighbour.
    REQUIRE(sql(frames, "UPDATE frame_chunks SET data = (SELECT data FROM frame_chunks WHERE run_id = 1 ORDER BY seq "
                        "LIMIT 1 OFFSET 6) WHERE id = (SELECT id FROM frame_chunks WHERE run_id = 1 ORDER BY seq LIMIT 1 "
                        "OFFSET 5);")
                .code == 0);
    r = verify(frames, "1");
    INFO(r.out);
    CHECK(r.code == 1);
    CHECK_THAT(r.out, Catch::Contains("run 1: data changed"));
}

TEST_CASE("verify refuses bad input with exit code 2") {
    CHECK(verify(recorded() / "tensiled.db", "").code == 2);
    CHECK(verify("/nonexistent/none.db", "--all").code == 2);
    CHECK(verify(recorded() / "tensiled.db", "--from 2026-13-45").code == 2);
}
