// Opening a second connection must not release the first one's file locks.
// POSIX drops all of a process's locks on a file when any descriptor of it is
// closed; our opening code once opened and closed the database file itself,
// so after the recorder's connection was opened another program's sqlite3
// session, on quitting, took itself for the last user and deleted the WAL and
// shm files under tensiled (and its next lock no longer excluded our writer).
// Checked with the sqlite3 shell as that other program.
#include <catch2/catch.hpp>

#include <filesystem>
#include <sys/stat.h>
#include <thread>

#include "daemon/storage/store.hpp"
#include "support/process.hpp"
#include "temp_dir.hpp"

using namespace tensile;
using namespace tensile::storage;
using tensile::testing::run_command;
using tensile::testing::TempDir;

TEST_CASE("a second connection of this process keeps the first's locks: another program's session leaves the WAL alone",
          "[store][locks]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    auto first = Store::open(path);
    REQUIRE(first.ok());
    NewRun r;
    r.material = "S355";
    REQUIRE(first->create_run(r).ok());
    REQUIRE(std::filesystem::exists(path + "-wal"));
    // The way tensiled opens its recorder and reader connections after the control one.
    auto second = Store::open(path);
    REQUIRE(second.ok());
    auto third = Store::open(path);
    REQUIRE(third.ok());

    // Another program opens the database, reads, and quits.
    const auto shell = run_command("sqlite3 " + path + " 'SELECT count(*) FROM runs;'");
    REQUIRE(shell.code == 0);
    CHECK(shell.out == "1\n");
    // It must have seen us: the WAL and the shared-memory index stay.
    CHECK(std::filesystem::exists(path + "-wal"));
    CHECK(std::filesystem::exists(path + "-shm"));

    // And a lock it holds still excludes our connections.
    const auto held = run_command("(printf '.timeout 2000\\nBEGIN EXCLUSIVE;\\n.print held\\n'; sleep 1.5; printf 'COMMIT;\\n') | sqlite3 " +
                                  path + " > /dev/null 2>&1 & sleep 0.5; echo started");
    REQUIRE(held.code == 0);
    first->db().set_busy_timeout(0);
    CHECK_FALSE(first->create_run(r).ok());
    std::this_thread::sleep_for(std::chrono::seconds(2));
    CHECK(first->create_run(r).ok());
}

TEST_CASE("a database file with wider rights is narrowed to the owner, a new one is created owner-only", "[store][locks]") {
    TempDir dir;
    const auto path = dir.file("runs.db");
    {
        auto s = Store::open(path);
        REQUIRE(s.ok());
    }
    struct stat st {};
    REQUIRE(::stat(path.c_str(), &st) == 0);
    CHECK((st.st_mode & 0777) == 0600);
    REQUIRE(::chmod(path.c_str(), 0644) == 0);
    auto again = Store::open(path);
    REQUIRE(again.ok());
    REQUIRE(::stat(path.c_str(), &st) == 0);
    CHECK((st.st_mode & 0777) == 0600);
    OpenOptions no_create;
    no_create.create = false;
    const auto missing = Store::open(dir.file("missing.db"), no_create);
    REQUIRE_FALSE(missing.ok());
    CHECK_THAT(missing.error(), Catch::Contains("missing.db"));
}
