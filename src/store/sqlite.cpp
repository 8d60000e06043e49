// The SQLite RAII wrappers: connection, statement, transaction guard; every return code checked.
#include "shelfstage/store/detail/sqlite.hpp"

#include <fmt/format.h>

#include <unistd.h>

#include <cerrno>
#include <chrono>
#include <cstring>
#include <ctime>
#include <limits>

#include "shelfstage/units/text.hpp"

namespace shelfstage::store::detail {

void throw_sqlite(sqlite3* db, int rc, std::string_view label, std::string_view what) {
  const int primary = rc & 0xff;
  // The operating system's reason behind an I/O failure ("No space left on device").
  const int os_error = db != nullptr ? sqlite3_system_errno(db) : 0;
  std::string detail;
  if (primary == SQLITE_BUSY || primary == SQLITE_LOCKED) {
    detail = "database is locked (another program is writing to it); try again";
  } else if (primary == SQLITE_NOTADB) {
    detail = "not a database file";
  } else if (primary == SQLITE_CORRUPT) {
    detail = "database is corrupt";
  } else if (primary == SQLITE_FULL || (primary == SQLITE_IOERR && (os_error == ENOSPC || os_error == EDQUOT))) {
    detail = "the disk is full (no space left on device); nothing was written";
  } else if (primary == SQLITE_READONLY || primary == SQLITE_CANTOPEN || primary == SQLITE_PERM) {
    const std::string why = write_obstacle(std::filesystem::path(std::string(label)));
    detail = why.empty() ? std::string(sqlite3_errstr(rc)) : fmt::format("cannot write: {}", why);
  } else if (primary == SQLITE_IOERR) {
    detail = fmt::format("input/output error ({}); the change, if any, was not made",
                         os_error != 0 ? std::strerror(os_error) : "the disk may be full or failing");
  } else if (db != nullptr && sqlite3_errcode(db) == rc) {
    detail = sqlite3_errmsg(db);
  } else {
    detail = sqlite3_errstr(rc);
  }
  if (what.empty()) throw DatabaseError(fmt::format("{}: {}", label, detail));
  throw DatabaseError(fmt::format("{}: {}: {}", label, what, detail));
}

std::string write_obstacle(const std::filesystem::path& path) {
  auto reason = [](int error, std::string_view whose) -> std::string {
    if (error == EROFS) return "it is on a read-only file system";
    if (error == EACCES || error == EPERM) return fmt::format("you have no permission to write {}", whose);
    return {};
  };
  std::error_code ec;
  const bool exists = std::filesystem::exists(path, ec);
  if (exists && ::access(path.c_str(), W_OK) != 0) {
    if (auto r = reason(errno, "it"); !r.empty()) return r;
  }
  const std::filesystem::path folder = path.has_parent_path() ? path.parent_path() : std::filesystem::path(".");
  if (::access(folder.c_str(), W_OK) != 0) {
    const int error = errno;
    if (error == ENOENT) return fmt::format("its folder {} does not exist", units::clip(folder.string()));
    // SQLite keeps its journal files beside the database, so the folder must be writable too.
    return reason(error, fmt::format("its folder {} (SQLite writes its journal there)", units::clip(folder.string())));
  }
  return {};
}

// --- Statement -----------------------------------------------------------------------

Statement::Statement(sqlite3* db, std::string_view sql, std::string label) : db_(db), label_(std::move(label)) {
  const char* tail = nullptr;
  const int rc = sqlite3_prepare_v2(db_, sql.data(), static_cast<int>(sql.size()), &stmt_, &tail);
  if (rc != SQLITE_OK) {
    sqlite3_finalize(stmt_);
    stmt_ = nullptr;
    throw_sqlite(db_, rc, label_, fmt::format("cannot prepare '{}'", sql));
  }
  if (stmt_ == nullptr) throw DatabaseError(fmt::format("{}: empty SQL statement", label_));
}

Statement::Statement(Statement&& other) noexcept
    : db_(other.db_), stmt_(std::exchange(other.stmt_, nullptr)), label_(std::move(other.label_)) {}

Statement& Statement::operator=(Statement&& other) noexcept {
  if (this != &other) {
    sqlite3_finalize(stmt_);
    db_ = other.db_;
    stmt_ = std::exchange(other.stmt_, nullptr);
    label_ = std::move(other.label_);
  }
  return *this;
}

Statement::~Statement() { sqlite3_finalize(stmt_); }

void Statement::fail(int rc, std::string_view what) const { throw_sqlite(db_, rc, label_, what); }

void Statement::check_bind(int rc, int index) {
  if (rc != SQLITE_OK) fail(rc, fmt::format("cannot bind parameter {} of '{}'", index, sqlite3_sql(stmt_)));
}

Statement& Statement::bind(int index, std::int64_t value) {
  check_bind(sqlite3_bind_int64(stmt_, index, value), index);
  return *this;
}

Statement& Statement::bind(int index, double value) {
  check_bind(sqlite3_bind_double(stmt_, index, value), index);
  return *this;
}

Statement& Statement::bind(int index, std::string_view value) {
  // A null data pointer would bind NULL; an empty string must stay an empty string.
  const char* data = value.data() != nullptr ? value.data() : "";
  check_bind(sqlite3_bind_text64(stmt_, index, data, value.size(), SQLITE_TRANSIENT, SQLITE_UTF8), index);
  return *this;
}

Statement& Statement::bind(int index, std::nullopt_t) {
  check_bind(sqlite3_bind_null(stmt_, index), index);
  return *this;
}

bool Statement::step() {
  const int rc = sqlite3_step(stmt_);
  if (rc == SQLITE_ROW) return true;
  if (rc == SQLITE_DONE) return false;
  // The statement must be reset before it can run again; its error is reported below.
  sqlite3_reset(stmt_);
  fail(rc, "");
}

int Statement::run() {
  while (step()) {
  }
  return sqlite3_changes(db_);
}

Statement& Statement::reset() {
  sqlite3_reset(stmt_);  // returns the last step's error, already reported by step()
  const int rc = sqlite3_clear_bindings(stmt_);
  if (rc != SQLITE_OK) fail(rc, "cannot clear bindings");
  return *this;
}

bool Statement::is_null(int col) const { return sqlite3_column_type(stmt_, col) == SQLITE_NULL; }

std::int64_t Statement::int64(int col) const { return sqlite3_column_int64(stmt_, col); }

int Statement::int32(int col) const {
  const std::int64_t v = sqlite3_column_int64(stmt_, col);
  if (v < std::numeric_limits<int>::min() || v > std::numeric_limits<int>::max())
    throw DatabaseError(
        fmt::format("{}: value {} in column {} of '{}' is out of range", label_, v, col, sqlite3_sql(stmt_)));
  return static_cast<int>(v);
}

double Statement::real(int col) const { return sqlite3_column_double(stmt_, col); }

std::string Statement::text(int col) const {
  const auto* p = reinterpret_cast<const char*>(sqlite3_column_text(stmt_, col));
  if (p == nullptr) {
    if (sqlite3_errcode(db_) == SQLITE_NOMEM) fail(SQLITE_NOMEM, "cannot read text column");
    return {};
  }
  return std::string(p, static_cast<std::size_t>(sqlite3_column_bytes(stmt_, col)));
}

std::optional<std::int64_t> Statement::opt_int64(int col) const {
  if (is_null(col)) return std::nullopt;
  return int64(col);
}

std::optional<double> Statement::opt_real(int col) const {
  if (is_null(col)) return std::nullopt;
  return real(col);
}

std::optional<std::string> Statement::opt_text(int col) const {
  if (is_null(col)) return std::nullopt;
  return text(col);
}

// --- Connection ----------------------------------------------------------------------

Connection::Connection(const std::filesystem::path& path, int flags, bool immutable) : label_(path.string()) {
  std::string name = path.string();
  if (immutable) {
    // RFC 3986 percent-encoding of the characters a file: URI gives a meaning to.
    std::string uri = "file:";
    for (const char c : name) {
      if (c == '%' || c == '?' || c == '#')
        uri += fmt::format("%{:02X}", static_cast<unsigned>(static_cast<unsigned char>(c)));
      else
        uri += c;
    }
    name = uri + "?immutable=1";
    flags = SQLITE_OPEN_READONLY | SQLITE_OPEN_URI;
  }
  const int rc = sqlite3_open_v2(name.c_str(), &db_, flags | SQLITE_OPEN_EXRESCODE, nullptr);
  if (rc != SQLITE_OK) {
    // On most failures SQLite still hands back a handle that carries the message.
    std::string message = db_ != nullptr ? sqlite3_errmsg(db_) : sqlite3_errstr(rc);
    const int primary = rc & 0xff;
    if (primary == SQLITE_CANTOPEN || primary == SQLITE_READONLY || primary == SQLITE_PERM) {
      if (const auto why = write_obstacle(path); !why.empty()) message = why;
    }
    sqlite3_close_v2(db_);
    db_ = nullptr;
    throw DatabaseError(fmt::format("{}: cannot open: {}", label_, message));
  }
}

Connection::Connection(Connection&& other) noexcept
    : db_(std::exchange(other.db_, nullptr)), label_(std::move(other.label_)), cache_(std::move(other.cache_)) {}

Connection& Connection::operator=(Connection&& other) noexcept {
  if (this != &other) {
    close();
    db_ = std::exchange(other.db_, nullptr);
    label_ = std::move(other.label_);
    cache_ = std::move(other.cache_);
  }
  return *this;
}

void Connection::close() noexcept {
  cache_.clear();  // finalizes the kept statements
  // close_v2 defers the close until every statement is finalized, so order does not matter.
  sqlite3_close_v2(db_);
  db_ = nullptr;
}

Connection::~Connection() { close(); }

Connection::Lease Connection::cached(std::string_view sql) const {
  auto it = cache_.find(sql);
  if (it == cache_.end())
    it = cache_.emplace(std::string(sql), Kept{std::make_unique<Statement>(db_, sql, label_), false}).first;
  if (it->second.busy) return Lease(prepare(sql));
  it->second.busy = true;
  return Lease(*it->second.statement, &it->second.busy);
}

void Connection::exec(const std::string& sql) const {
  char* message = nullptr;
  const int rc = sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &message);
  if (rc != SQLITE_OK) {
    std::string text = message != nullptr ? message : sqlite3_errstr(rc);
    sqlite3_free(message);
    // Failures of the file (rather than of the SQL) are told as throw_sqlite tells them.
    const int primary = rc & 0xff;
    if (primary == SQLITE_BUSY || primary == SQLITE_LOCKED || primary == SQLITE_NOTADB || primary == SQLITE_CORRUPT ||
        primary == SQLITE_FULL || primary == SQLITE_IOERR || primary == SQLITE_READONLY || primary == SQLITE_CANTOPEN ||
        primary == SQLITE_PERM)
      fail(rc, "");
    throw DatabaseError(fmt::format("{}: {}", label_, text));
  }
}

void Connection::busy_timeout(int ms) const {
  const int rc = sqlite3_busy_timeout(db_, ms);
  if (rc != SQLITE_OK) fail(rc, "cannot set the busy timeout");
}

// --- Transaction ---------------------------------------------------------------------

Transaction::Transaction(const Connection& conn, Mode mode) : conn_(conn), nested_(conn.in_transaction()) {
  if (nested_)
    conn_.exec("SAVEPOINT shelfstage_nested");
  else
    conn_.exec(mode == Mode::immediate ? "BEGIN IMMEDIATE" : "BEGIN DEFERRED");
}

void Transaction::commit() {
  if (done_) return;
  conn_.exec(nested_ ? "RELEASE shelfstage_nested" : "COMMIT");
  done_ = true;
}

Transaction::~Transaction() {
  if (done_) return;
  // Never throws: a failed rollback leaves SQLite to roll back when the connection closes.
  if (nested_) {
    sqlite3_exec(conn_.handle(), "ROLLBACK TO shelfstage_nested; RELEASE shelfstage_nested", nullptr, nullptr, nullptr);
  } else if (conn_.in_transaction()) {
    sqlite3_exec(conn_.handle(), "ROLLBACK", nullptr, nullptr, nullptr);
  }
}

std::string utc_now() {
  const std::time_t t = std::chrono::system_clock::to_time_t(std::chrono::system_clock::now());
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

}  // namespace shelfstage::store::detail
