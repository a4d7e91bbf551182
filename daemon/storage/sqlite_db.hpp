// Thin RAII wrappers over one SQLite connection and its prepared statements.
// All values reach SQL through bound parameters; `exec` takes only constant
// SQL written in this folder. One Db is used by one thread at a time.
// Error policy: every call returns a value (Status / Result) carrying SQLite's
// own message; nothing throws.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <type_traits>
#include <utility>

#include "engine/result.hpp"

struct sqlite3;
struct sqlite3_stmt;

namespace tensile::storage {

struct Done {};
using Status = Result<Done>;

class Stmt {
public:
    Stmt() = default;
    Stmt(sqlite3* db, sqlite3_stmt* stmt) : db_(db), stmt_(stmt) {}
    Stmt(Stmt&& other) noexcept : db_(other.db_), stmt_(std::exchange(other.stmt_, nullptr)) {}
    Stmt& operator=(Stmt&& other) noexcept;
    Stmt(const Stmt&) = delete;
    Stmt& operator=(const Stmt&) = delete;
    ~Stmt();

    // Parameters are numbered from 1, as in SQLite.
    template <class T>
        requires std::is_integral_v<T>
    Stmt& bind(int i, T v) { return bind_int64(i, static_cast<std::int64_t>(v)); }
    Stmt& bind_int64(int i, std::int64_t v);
    Stmt& bind(int i, double v);  // NaN is stored as NULL by SQLite
    Stmt& bind(int i, std::string_view text);
    Stmt& bind(int i, const char* text) { return bind(i, std::string_view(text)); }
    Stmt& bind(int i, std::nullopt_t);
    Stmt& bind_blob(int i, std::string_view bytes);
    template <class T>
    Stmt& bind(int i, const std::optional<T>& v) { return v ? bind(i, *v) : bind(i, std::nullopt); }

    // One step: true when a row is ready, false when done.
    Result<bool> step();
    // Steps to the end and resets, for statements without rows.
    Status run();
    void reset();
    explicit operator bool() const { return stmt_ != nullptr; }

    [[nodiscard]] bool is_null(int col) const;
    [[nodiscard]] std::int64_t int64(int col) const;
    [[nodiscard]] double real(int col) const;  // NULL reads as NaN
    [[nodiscard]] std::optional<double> opt_real(int col) const;
    [[nodiscard]] std::string text(int col) const;
    [[nodiscard]] std::string_view blob(int col) const;  // valid until the next step

private:
    sqlite3* db_ = nullptr;
    sqlite3_stmt* stmt_ = nullptr;
};

// Heap memory SQLite holds in this process, all connections together (page
// caches, statements, schemas), now and at its highest since start: the
// part of the daemon's resident memory that grows with the database until
// each connection's page cache (2 MiB by default) is full.
struct SqliteMemory {
    std::int64_t used_bytes = 0;
    std::int64_t peak_bytes = 0;
};
SqliteMemory sqlite_memory();

class Db {
public:
    // Opens (creating when allowed) with the full-mutex-free threading mode:
    // the caller keeps a connection on one thread.
    static Result<Db> open(const std::string& path, bool create);

    Db(Db&& other) noexcept : db_(std::exchange(other.db_, nullptr)) {}
    Db& operator=(Db&& other) noexcept;
    Db(const Db&) = delete;
    Db& operator=(const Db&) = delete;
    ~Db();

    Status exec(const char* constant_sql);
    Result<Stmt> prepare(std::string_view sql);
    [[nodiscard]] std::int64_t last_insert_id() const;
    [[nodiscard]] std::int64_t changes() const;  // rows changed by the last statement
    [[nodiscard]] std::string message() const;
    // The last failure was another connection's lock (SQLITE_BUSY / SQLITE_LOCKED
    // after the busy timeout): worth trying again later, unlike other errors.
    [[nodiscard]] bool last_was_busy() const;
    // The last error was SQLITE_FULL: the disk, or the database's page cap, is full.
    [[nodiscard]] bool last_was_full() const;
    void set_busy_timeout(int ms);
    [[nodiscard]] sqlite3* handle() const { return db_; }

private:
    explicit Db(sqlite3* db) : db_(db) {}
    sqlite3* db_ = nullptr;
};

// Runs `body` inside BEGIN IMMEDIATE ... COMMIT; rolls back when it fails.
// IMMEDIATE takes the write lock up front, so two connections never deadlock
// upgrading a read transaction (WAL would answer SQLITE_BUSY at once).
template <class F>
Status in_transaction(Db& db, F&& body) {
    if (auto s = db.exec("BEGIN IMMEDIATE"); !s) return s;
    Status result = body();
    if (!result) {
        (void)db.exec("ROLLBACK");
        return result;
    }
    if (auto s = db.exec("COMMIT"); !s) {
        (void)db.exec("ROLLBACK");
        return s;
    }
    return result;
}

}  // namespace tensile::storage
