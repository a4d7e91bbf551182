// Database file set-up and schema migrations. Migrations are append-only: a
// released step is never edited, a change is a new step. Each step runs in its
// own transaction together with its user_version bump, so a crash mid-way
// leaves the previous version intact.
#include "schema.hpp"

#include <array>
#include <cerrno>
#include <cstring>
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

namespace tensile::storage {
namespace {

// Times named *_unix_s are wall-clock seconds since 1970 (UTC); times named
// time_s are on the run's own clock, as in Frame::time_s.
constexpr std::array<const char*, schema_version> migrations{
    // 1: the first schema.
    R"sql(
CREATE TABLE runs (
  id               INTEGER PRIMARY KEY,
  specimen         TEXT NOT NULL,            -- JSON
  material         TEXT NOT NULL DEFAULT '',
  profile          TEXT NOT NULL,            -- JSON
  config_snapshot  TEXT NOT NULL,
  software_version TEXT NOT NULL,
  state            TEXT NOT NULL,
  state_cause      TEXT NOT NULL DEFAULT '',
  created_unix_s   REAL NOT NULL,
  started_unix_s   REAL,
  finished_unix_s  REAL,
  results          TEXT,                     -- JSON
  digest_sha256    TEXT                      -- hex, set when the run is closed
);
CREATE INDEX runs_by_created ON runs(created_unix_s);

CREATE TABLE state_changes (
  id      INTEGER PRIMARY KEY,
  run_id  INTEGER NOT NULL REFERENCES runs(id),
  state   TEXT NOT NULL,
  cause   TEXT NOT NULL,
  unix_s  REAL NOT NULL
);
CREATE INDEX state_changes_by_run ON state_changes(run_id);

CREATE TABLE frame_chunks (
  id           INTEGER PRIMARY KEY,
  run_id       INTEGER NOT NULL REFERENCES runs(id),
  seq          INTEGER NOT NULL,
  first_index  INTEGER NOT NULL,
  frame_count  INTEGER NOT NULL,
  first_time_s REAL,
  last_time_s  REAL,
  data         BLOB NOT NULL,                -- frame_codec.hpp
  UNIQUE (run_id, seq)
);

CREATE TABLE raw_chunks (
  id           INTEGER PRIMARY KEY,
  run_id       INTEGER NOT NULL REFERENCES runs(id),
  source       TEXT NOT NULL,
  seq          INTEGER NOT NULL,
  first_time_s REAL,
  last_time_s  REAL,
  bytes        BLOB NOT NULL,
  arrivals     BLOB NOT NULL,                -- raw_chunk.hpp
  UNIQUE (run_id, source, seq)
);

CREATE TABLE events (
  id         INTEGER PRIMARY KEY,
  run_id     INTEGER NOT NULL REFERENCES runs(id),
  kind       TEXT NOT NULL,
  label      TEXT NOT NULL,
  time_s     REAL,
  frame      INTEGER,
  stress_MPa REAL,
  strain     REAL,
  value      REAL
);
CREATE INDEX events_by_run ON events(run_id);

CREATE TABLE alarms (
  id      INTEGER PRIMARY KEY,
  run_id  INTEGER REFERENCES runs(id),       -- NULL: not tied to a run
  unix_s  REAL NOT NULL,
  kind    TEXT NOT NULL,
  message TEXT NOT NULL
);
CREATE INDEX alarms_by_run ON alarms(run_id);

CREATE TABLE counters (
  id      INTEGER PRIMARY KEY,
  run_id  INTEGER REFERENCES runs(id),
  source  TEXT NOT NULL,                     -- source or channel name
  name    TEXT NOT NULL,
  value   REAL NOT NULL,
  unix_s  REAL NOT NULL
);
CREATE INDEX counters_by_run ON counters(run_id);
)sql",
    // 2: verification records, so an auditor sees when each run was re-checked.
    R"sql(
CREATE TABLE verifications (
  id               INTEGER PRIMARY KEY,
  run_id           INTEGER NOT NULL REFERENCES runs(id),
  unix_s           REAL NOT NULL,
  software_version TEXT NOT NULL,
  outcome          TEXT NOT NULL,
  details          TEXT NOT NULL DEFAULT '{}'  -- JSON
);
CREATE INDEX verifications_by_run ON verifications(run_id);
)sql",
    // 3: raw chunks are packed (raw_chunk.hpp); rows written before stay plain.
    R"sql(
ALTER TABLE raw_chunks ADD COLUMN codec TEXT NOT NULL DEFAULT 'plain';
)sql",
};

// Creates the file owner-only before SQLite sees it; SQLite then gives its
// -wal and -shm files the same mode. A file found with wider rights is narrowed.
//
// An existing file is never opened here: POSIX drops every lock a process
// holds on a file when it closes *any* descriptor of that file, so an open and
// close beside a live connection of this process (the recorder and the monitor
// open theirs after the control connection) silently released that
// connection's locks. Another program's sqlite3 session then believed it was
// the last user, deleted the WAL and shm files on closing, and the next lock
// it took no longer excluded tensiled's writer. Path-based calls only, and an
// open only to create a file that did not exist, on which nobody holds locks.
Status prepare_file(const std::string& path, bool create) {
    struct stat st {};
    if (::stat(path.c_str(), &st) == 0) {
        if ((st.st_mode & 0077) != 0 && ::chmod(path.c_str(), 0600) != 0)
            return Error{"cannot make database " + path + " owner-only: " + std::strerror(errno)};
        return Done{};
    }
    if (errno != ENOENT) return Error{"cannot stat database " + path + ": " + std::strerror(errno)};
    if (!create) return Error{"cannot open database " + path + ": " + std::strerror(ENOENT)};
    const int fd = ::open(path.c_str(), O_RDWR | O_CLOEXEC | O_CREAT | O_EXCL, 0600);
    if (fd < 0 && errno != EEXIST) return Error{"cannot create database " + path + ": " + std::strerror(errno)};
    if (fd >= 0) ::close(fd);
    return Done{};
}

}  // namespace

Result<int> read_schema_version(Db& db) {
    auto stmt = db.prepare("PRAGMA user_version");
    if (!stmt) return Error{stmt.error()};
    auto row = stmt->step();
    if (!row) return Error{row.error()};
    return static_cast<int>(stmt->int64(0));
}

Status migrate(Db& db, int target) {
    auto version = read_schema_version(db);
    if (!version) return Error{version.error()};
    if (*version > schema_version)
        return Error{"database schema version " + std::to_string(*version) + " is newer than this software knows (" +
                     std::to_string(schema_version) + "); refusing to touch it"};
    for (int v = *version; v < target; ++v) {
        auto step = in_transaction(db, [&]() -> Status {
            if (auto s = db.exec(migrations[static_cast<std::size_t>(v)]); !s) return s;
            // PRAGMA takes no parameters; the number is ours, not input.
            const std::string bump = "PRAGMA user_version = " + std::to_string(v + 1);
            return db.exec(bump.c_str());
        });
        if (!step) return Error{"schema migration to version " + std::to_string(v + 1) + " failed: " + step.error()};
    }
    return Done{};
}

Result<Db> open_database(const std::string& path, const OpenOptions& options) {
    if (auto s = prepare_file(path, options.create); !s) return Error{s.error()};
    auto db = Db::open(path, false);
    if (!db) return db;
    const std::string busy = "PRAGMA busy_timeout = " + std::to_string(options.busy_timeout_ms);
    const char* sync = options.durability == Durability::power_safe ? "PRAGMA synchronous = FULL" : "PRAGMA synchronous = NORMAL";
    for (const char* sql : {busy.c_str(), "PRAGMA journal_mode = WAL", sync, "PRAGMA foreign_keys = ON",
                            "PRAGMA journal_size_limit = 67108864"}) {
        if (auto s = db->exec(sql); !s) return Error{"database " + path + ": " + s.error()};
    }
    if (auto s = migrate(*db); !s) return Error{"database " + path + ": " + s.error()};
    return db;
}

}  // namespace tensile::storage
