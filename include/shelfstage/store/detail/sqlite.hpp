// Small RAII wrappers over the SQLite C API, and Database::Impl, for the store layer and the
// layers above it (designs, builds) that run their own queries on the stock file.
//
// Every SQLite return code is checked; a failure throws DatabaseError naming the file
// ("stock.db: database is locked"). Typical use from a layer above:
//
//   auto& impl = db.impl();
//   impl.immediate([&] {                         // BEGIN IMMEDIATE ... COMMIT, or ROLLBACK
//     impl.conn.prepare("INSERT INTO designs(id, created, spec_json, candidate_json) "
//                       "VALUES (?, ?, ?, ?)")
//         .bind_all(id, detail::utc_now(), spec, candidate)
//         .run();
//     impl.record_change(part_id, -2, "build 7", build_id);  // ledger line + qty
//   });
//   auto st = impl.conn.prepare("SELECT id, copies FROM builds WHERE state = ?").bind(1, "built");
//   while (st.step()) use(st.int64(0), st.int32(1));
//   int n = impl.conn.prepare("SELECT count(*) FROM designs").scalar<int>();
//
// NOTES (invariants the schema keeps; see database.cpp for the SQL):
//  1. parts.qty == sum(ledger.delta) per part. A ledger INSERT adds its delta to parts.qty
//     (trigger ledger_apply); the ledger refuses UPDATE and DELETE (RAISE). So change a
//     quantity only by inserting a ledger row (record_change does it).
//  2. parts.reserved == sum(reservations.qty) per part: reservation INSERT/DELETE/UPDATE
//     move parts.reserved (triggers). So hold or release pieces only through the
//     reservations table (reserve() or a DELETE).
//  3. CHECK (0 <= reserved <= qty) on parts: a change that breaks it fails the statement.
//  4. Nested Transaction guards become SAVEPOINTs, so helpers compose; do not start a write
//     inside a read-only snapshot() (SQLite may then report "locked" without waiting).
#pragma once
#include <sqlite3.h>

#include <cstdint>
#include <filesystem>
#include <functional>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <type_traits>
#include <utility>

#include "shelfstage/error.hpp"
#include "shelfstage/store/database.hpp"
#include "shelfstage/store/part.hpp"

namespace shelfstage::store::detail {

/// Throws DatabaseError "LABEL: WHAT: <sqlite message>" for the failed call whose result is rc.
/// SQLITE_BUSY/LOCKED read "database is locked", SQLITE_NOTADB "not a database file".
[[noreturn]] void throw_sqlite(sqlite3* db, int rc, std::string_view label, std::string_view what);

/// One prepared statement. Move-only; finalized on destruction. Bind indices are 1-based,
/// column indices 0-based (as in the C API). bind() returns *this so calls chain.
class Statement {
 public:
  Statement(sqlite3* db, std::string_view sql, std::string label);
  Statement(Statement&& other) noexcept;
  Statement& operator=(Statement&& other) noexcept;
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;
  ~Statement();

  Statement& bind(int index, std::int64_t value);
  Statement& bind(int index, int value) { return bind(index, static_cast<std::int64_t>(value)); }
  Statement& bind(int index, double value);
  Statement& bind(int index, std::string_view value);  ///< copied (SQLITE_TRANSIENT)
  Statement& bind(int index, const std::string& value) { return bind(index, std::string_view(value)); }
  Statement& bind(int index, const char* value) { return bind(index, std::string_view(value)); }
  Statement& bind(int index, std::nullopt_t);  ///< NULL
  template <class T>
  Statement& bind(int index, const std::optional<T>& value) {
    return value ? bind(index, *value) : bind(index, std::nullopt);
  }
  /// Binds the arguments to parameters 1, 2, 3, ...
  template <class... A>
  Statement& bind_all(const A&... args) {
    int i = 0;
    (bind(++i, args), ...);
    return *this;
  }

  /// Runs one step: true when a row is ready to read, false when the statement is done.
  bool step();
  /// Steps to the end (rows are ignored); returns the number of rows changed.
  int run();
  /// Resets the statement and clears its bindings, to run it again.
  Statement& reset();

  bool is_null(int col) const;
  std::int64_t int64(int col) const;
  int int32(int col) const;  ///< DatabaseError when the stored value does not fit in int
  double real(int col) const;
  std::string text(int col) const;
  std::optional<std::int64_t> opt_int64(int col) const;
  std::optional<double> opt_real(int col) const;
  std::optional<std::string> opt_text(int col) const;
  /// get<T>(col) for T in int, std::int64_t, double, std::string and std::optional of those.
  template <class T>
  T get(int col) const;

  /// Steps once; column 0 of the first row, or nullopt when there is no row.
  template <class T>
  std::optional<T> first() {
    if (!step()) return std::nullopt;
    return get<T>(0);
  }
  /// Steps once; column 0 of the first row. DatabaseError when there is no row.
  template <class T>
  T scalar() {
    if (!step()) fail(SQLITE_ERROR, "query returned no row");
    return get<T>(0);
  }

  sqlite3_stmt* handle() const { return stmt_; }

 private:
  [[noreturn]] void fail(int rc, std::string_view what) const;
  void check_bind(int rc, int index);
  sqlite3* db_ = nullptr;
  sqlite3_stmt* stmt_ = nullptr;
  std::string label_;
};

template <>
inline int Statement::get<int>(int col) const {
  return int32(col);
}
template <>
inline std::int64_t Statement::get<std::int64_t>(int col) const {
  return int64(col);
}
template <>
inline double Statement::get<double>(int col) const {
  return real(col);
}
template <>
inline std::string Statement::get<std::string>(int col) const {
  return text(col);
}
template <>
inline std::optional<int> Statement::get<std::optional<int>>(int col) const {
  if (is_null(col)) return std::nullopt;
  return int32(col);
}
template <>
inline std::optional<std::int64_t> Statement::get<std::optional<std::int64_t>>(int col) const {
  return opt_int64(col);
}
template <>
inline std::optional<double> Statement::get<std::optional<double>>(int col) const {
  return opt_real(col);
}
template <>
inline std::optional<std::string> Statement::get<std::optional<std::string>>(int col) const {
  return opt_text(col);
}

/// One open connection. Move-only; closed on destruction. label() names the file in errors.
class Connection {
 public:
  /// A statement from the connection's cache, reset (bindings cleared) when the lease ends.
  /// When its statement is already leased, a lease owns a fresh statement instead, so leases
  /// of one SQL text may nest safely.
  class Lease {
   public:
    Lease(Statement& st, bool* busy) : st_(&st), busy_(busy) {}
    explicit Lease(Statement owned) : owned_(std::make_unique<Statement>(std::move(owned))), st_(owned_.get()) {}
    Lease(const Lease&) = delete;
    Lease& operator=(const Lease&) = delete;
    ~Lease() {
      if (busy_ != nullptr) {
        sqlite3_reset(st_->handle());
        sqlite3_clear_bindings(st_->handle());
        *busy_ = false;
      }
    }
    Statement* operator->() const { return st_; }
    Statement& operator*() const { return *st_; }

   private:
    std::unique_ptr<Statement> owned_;
    Statement* st_ = nullptr;
    bool* busy_ = nullptr;
  };

  Connection() = default;
  /// sqlite3_open_v2 with flags (SQLITE_OPEN_READWRITE, | SQLITE_OPEN_CREATE, ...). With
  /// immutable, the file is opened read-only as a URI with immutable=1 (no locks, no journal
  /// files: for a file on a read-only file system with no write-ahead log left over).
  Connection(const std::filesystem::path& path, int flags, bool immutable = false);
  Connection(Connection&& other) noexcept;
  Connection& operator=(Connection&& other) noexcept;
  Connection(const Connection&) = delete;
  Connection& operator=(const Connection&) = delete;
  ~Connection();

  Statement prepare(std::string_view sql) const { return Statement(db_, sql, label_); }
  /// The statement for sql, prepared once per connection and kept (an import runs the same
  /// few statements for every row); see Lease.
  Lease cached(std::string_view sql) const;
  /// Runs SQL text that may hold several statements and returns no rows (schema scripts).
  void exec(const std::string& sql) const;
  std::int64_t last_insert_rowid() const { return sqlite3_last_insert_rowid(db_); }
  /// How long a statement waits for another connection's lock before failing (locked).
  void busy_timeout(int ms) const;
  /// True inside an explicit transaction.
  bool in_transaction() const { return sqlite3_get_autocommit(db_) == 0; }
  [[noreturn]] void fail(int rc, std::string_view what) const { throw_sqlite(db_, rc, label_, what); }

  sqlite3* handle() const { return db_; }
  const std::string& label() const { return label_; }

 private:
  struct Kept {
    std::unique_ptr<Statement> statement;
    bool busy = false;
  };
  void close() noexcept;
  sqlite3* db_ = nullptr;
  std::string label_;
  mutable std::map<std::string, Kept, std::less<>> cache_;
};

/// Guard for one transaction: BEGIN IMMEDIATE (takes the write lock at once, waiting up to
/// the busy timeout) or BEGIN DEFERRED; commit() makes it durable; the destructor rolls
/// back whatever was not committed. Inside an open transaction it is a SAVEPOINT instead.
class Transaction {
 public:
  enum class Mode { immediate, deferred };
  explicit Transaction(const Connection& conn, Mode mode = Mode::immediate);
  Transaction(const Transaction&) = delete;
  Transaction& operator=(const Transaction&) = delete;
  ~Transaction();
  void commit();

 private:
  const Connection& conn_;
  bool nested_ = false;
  bool done_ = false;
};

/// Now as ISO 8601 UTC with seconds: "2026-12-01T21:53:00Z".
std::string utc_now();

/// Why the file at path (or, when it does not exist, its folder) cannot be written, for
/// people: "it is on a read-only file system", "you may not write its folder ..."; empty when
/// access(2) finds nothing in the way.
std::string write_obstacle(const std::filesystem::path& path);

}  // namespace shelfstage::store::detail

namespace shelfstage::store {

/// What a Database holds: the connection and the helpers the stock rules need. Layers above
/// may use it for their own tables (designs, builds, build_lines, reservations).
struct Database::Impl {
  detail::Connection conn;
  std::filesystem::path path;
  int version = 0;                  ///< schema version after migration (== kSchemaVersion once open)
  std::string read_only;            ///< not empty: why every write is refused (DatabaseError)
  std::function<void()> on_commit;  ///< called after each outermost write commits

  /// Runs body in one BEGIN IMMEDIATE transaction and returns what it returns; an exception
  /// rolls everything back and propagates. Refused (DatabaseError) on a read-only database.
  template <class F>
  decltype(auto) immediate(F&& body) {
    if (!read_only.empty()) throw DatabaseError(read_only);
    const bool outermost = !conn.in_transaction();
    detail::Transaction tx(conn, detail::Transaction::Mode::immediate);
    if constexpr (std::is_void_v<std::invoke_result_t<F&>>) {
      body();
      tx.commit();
      if (outermost && on_commit) on_commit();
    } else {
      auto result = body();
      tx.commit();
      if (outermost && on_commit) on_commit();
      return result;
    }
  }
  /// Runs body in one read transaction (BEGIN DEFERRED): every query sees one snapshot.
  template <class F>
  decltype(auto) snapshot(F&& body) {
    detail::Transaction tx(conn, detail::Transaction::Mode::deferred);
    if constexpr (std::is_void_v<std::invoke_result_t<F&>>) {
      body();
      tx.commit();
    } else {
      auto result = body();
      tx.commit();
      return result;
    }
  }

  /// The stock line with this id, removed or not.
  std::optional<Part> load_part(std::int64_t id) const;
  /// Changes a line's quantity on hand by delta through one ledger line (NOTES 1) and
  /// returns the ledger id. InputError for an unknown line; InfeasibleError when the
  /// change would leave fewer pieces than are reserved, or fewer than zero (build short).
  /// delta 0 writes nothing and returns 0. Call inside immediate().
  std::int64_t record_change(std::int64_t part_id, int delta, std::string_view reason,
                             std::optional<std::int64_t> build_id = std::nullopt);
  /// Holds qty pieces of a line for a design (nullopt: held outside any design) and returns
  /// the reservation id. InfeasibleError when fewer than qty pieces are available.
  /// Release by deleting the reservation row(s). Call inside immediate().
  std::int64_t reserve(std::optional<std::string> design_id, std::int64_t part_id, int qty);
};

}  // namespace shelfstage::store
