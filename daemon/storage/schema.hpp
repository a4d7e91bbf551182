// Opening the database file: owner-only permissions, WAL, durability level,
// and the versioned schema (PRAGMA user_version = number of migrations
// applied). A database newer than this software is refused, never touched.
// Error policy: start-up code; every failure is a Result error naming the file
// and what went wrong.
#pragma once

#include <string>

#include "sqlite_db.hpp"

namespace tensile::storage {

// FULL syncs the WAL at every commit, so a power cut loses at most the last
// commit interval; NORMAL syncs only at checkpoints, which is enough for a
// killed process but not for a lost power supply. Commits come at most a few
// times a second from the writer thread, so FULL is the default.
enum class Durability { power_safe, process_safe };

struct OpenOptions {
    bool create = true;
    Durability durability = Durability::power_safe;
    int busy_timeout_ms = 5000;  // other connections hold the write lock for one commit at most
};

inline constexpr int schema_version = 3;

Result<Db> open_database(const std::string& path, const OpenOptions& options = {});

// Applies migrations up to `target` (tests use a lower target to build an old file).
Status migrate(Db& db, int target = schema_version);
Result<int> read_schema_version(Db& db);

}  // namespace tensile::storage
