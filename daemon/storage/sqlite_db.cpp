// SQLite wrappers; see sqlite_db.hpp. Errors carry sqlite3_errmsg.
#include "sqlite_db.hpp"

#include <cmath>
#include <sqlite3.h>

namespace tensile::storage {

Stmt& Stmt::operator=(Stmt&& other) noexcept {
    if (this != &other) {
        sqlite3_finalize(stmt_);
        db_ = other.db_;
        stmt_ = std::exchange(other.stmt_, nullptr);
    }
    return *this;
}

Stmt::~Stmt() { sqlite3_finalize(stmt_); }

// Bind errors (wrong index, out of memory) surface at step(), which reports them.
Stmt& Stmt::bind_int64(int i, std::int64_t v) { sqlite3_bind_int64(stmt_, i, v); return *this; }
Stmt& Stmt::bind(int i, double v) { sqlite3_bind_double(stmt_, i, v); return *this; }
Stmt& Stmt::bind(int i, std::string_view text) {
    sqlite3_bind_text64(stmt_, i, text.data(), text.size(), SQLITE_TRANSIENT, SQLITE_UTF8);
    return *this;
}
Stmt& Stmt::bind(int i, std::nullopt_t) { sqlite3_bind_null(stmt_, i); return *this; }
Stmt& Stmt::bind_blob(int i, std::string_view bytes) {
    // A zero-length blob must still be a blob, not NULL: pass a non-null pointer.
    static constexpr char empty = 0;
    sqlite3_bind_blob64(stmt_, i, bytes.empty() ? &empty : bytes.data(), bytes.size(), SQLITE_TRANSIENT);
    return *this;
}

Result<bool> Stmt::step() {
    const int rc = sqlite3_step(stmt_);
    if (rc == SQLITE_ROW) return true;
    if (rc == SQLITE_DONE) return false;
    Error e{std::string("sqlite: ") + sqlite3_errmsg(db_)};
    sqlite3_reset(stmt_);
    return e;
}

Status Stmt::run() {
    auto r = step();
    sqlite3_reset(stmt_);
    if (!r) return Error{r.error()};
    return Done{};
}

void Stmt::reset() {
    sqlite3_reset(stmt_);
    sqlite3_clear_bindings(stmt_);
}

bool Stmt::is_null(int col) const { return sqlite3_column_type(stmt_, col) == SQLITE_NULL; }
std::int64_t Stmt::int64(int col) const { return sqlite3_column_int64(stmt_, col); }
double Stmt::real(int col) const { return is_null(col) ? std::nan("") : sqlite3_column_double(stmt_, col); }
std::optional<double> Stmt::opt_real(int col) const {
    if (is_null(col)) return std::nullopt;
    return sqlite3_column_double(stmt_, col);
}
std::string Stmt::text(int col) const {
    const auto* p = sqlite3_column_text(stmt_, col);
    const int n = sqlite3_column_bytes(stmt_, col);
    return p ? std::string(reinterpret_cast<const char*>(p), static_cast<std::size_t>(n)) : std::string();
}
std::string_view Stmt::blob(int col) const {
    const void* p = sqlite3_column_blob(stmt_, col);
    const int n = sqlite3_column_bytes(stmt_, col);
    return p ? std::string_view(static_cast<const char*>(p), static_cast<std::size_t>(n)) : std::string_view();
}

Result<Db> Db::open(const std::string& path, bool create) {
    sqlite3* raw = nullptr;
    const int flags = SQLITE_OPEN_READWRITE | (create ? SQLITE_OPEN_CREATE : 0) | SQLITE_OPEN_NOMUTEX;
    const int rc = sqlite3_open_v2(path.c_str(), &raw, flags, nullptr);
    if (rc != SQLITE_OK) {
        std::string msg = raw ? sqlite3_errmsg(raw) : sqlite3_errstr(rc);
        sqlite3_close(raw);
        return Error{"cannot open database " + path + ": " + msg};
    }
    sqlite3_extended_result_codes(raw, 1);
    return Db(raw);
}

Db& Db::operator=(Db&& other) noexcept {
    if (this != &other) {
        sqlite3_close_v2(db_);
        db_ = std::exchange(other.db_, nullptr);
    }
    return *this;
}

Db::~Db() { sqlite3_close_v2(db_); }

Status Db::exec(const char* constant_sql) {
    char* err = nullptr;
    if (sqlite3_exec(db_, constant_sql, nullptr, nullptr, &err) != SQLITE_OK) {
        std::string msg = err ? err : sqlite3_errmsg(db_);
        sqlite3_free(err);
        return Error{"sqlite: " + msg};
    }
    return Done{};
}

Result<Stmt> Db::prepare(std::string_view sql) {
    sqlite3_stmt* stmt = nullptr;
    if (sqlite3_prepare_v3(db_, sql.data(), static_cast<int>(sql.size()), SQLITE_PREPARE_PERSISTENT, &stmt, nullptr) != SQLITE_OK)
        return Error{std::string("sqlite: ") + sqlite3_errmsg(db_)};
    return Stmt(db_, stmt);
}

std::int64_t Db::last_insert_id() const { return sqlite3_last_insert_rowid(db_); }
std::int64_t Db::changes() const { return sqlite3_changes64(db_); }
std::string Db::message() const { return sqlite3_errmsg(db_); }
bool Db::last_was_busy() const {
    const int rc = sqlite3_errcode(db_) & 0xff;
    return rc == SQLITE_BUSY || rc == SQLITE_LOCKED;
}
bool Db::last_was_full() const { return (sqlite3_errcode(db_) & 0xff) == SQLITE_FULL; }
void Db::set_busy_timeout(int ms) { sqlite3_busy_timeout(db_, ms); }

SqliteMemory sqlite_memory() {
    return {static_cast<std::int64_t>(sqlite3_memory_used()), static_cast<std::int64_t>(sqlite3_memory_highwater(0))};
}

}  // namespace tensile::storage
