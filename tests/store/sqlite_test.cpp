// Tests of the SQLite wrappers: binding, columns, errors, transactions, savepoints, locking.
#include "shelfstage/store/detail/sqlite.hpp"

#include <doctest/doctest.h>

#include <cstdint>
#include <limits>
#include <regex>

#include "store/fixture.hpp"

using namespace shelfstage;
using store::detail::Connection;
using store::detail::Transaction;
using store::testing::RawDb;
using store::testing::TempDir;

namespace {

Connection memory() {
  Connection c(":memory:", SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
  c.exec("CREATE TABLE t (i INTEGER, r REAL, s TEXT)");
  return c;
}

int count(const Connection& c) { return c.prepare("SELECT count(*) FROM t").scalar<int>(); }

}  // namespace

TEST_CASE("statement: values go in and come out unchanged, NULL as nullopt") {
  const Connection c = memory();
  const std::int64_t big = std::numeric_limits<std::int64_t>::max();
  c.prepare("INSERT INTO t VALUES (?, ?, ?)").bind_all(big, 0.1, std::string("a,\"b\"\nc")).run();
  c.prepare("INSERT INTO t VALUES (?, ?, ?)")
      .bind_all(std::optional<std::int64_t>{}, std::optional<double>{}, std::string_view{})
      .run();
  auto st = c.prepare("SELECT i, r, s FROM t ORDER BY rowid");
  REQUIRE(st.step());
  CHECK(st.int64(0) == big);
  CHECK(st.real(1) == 0.1);  // REAL storage is the IEEE 754 double itself
  CHECK(st.text(2) == "a,\"b\"\nc");
  CHECK_THROWS_AS(st.int32(0), DatabaseError);  // does not fit in int
  REQUIRE(st.step());
  CHECK(st.is_null(0));
  CHECK_FALSE(st.opt_int64(0).has_value());
  CHECK_FALSE(st.opt_real(1).has_value());
  // An empty string_view binds an empty text, not NULL.
  CHECK_FALSE(st.is_null(2));
  CHECK(st.get<std::optional<std::string>>(2) == std::optional<std::string>(""));
  CHECK_FALSE(st.step());
}

TEST_CASE("statement: first, scalar, reset and reuse") {
  const Connection c = memory();
  auto ins = c.prepare("INSERT INTO t (i) VALUES (?)");
  for (int i = 1; i <= 3; ++i) ins.reset().bind(1, i).run();
  CHECK(count(c) == 3);
  CHECK(c.prepare("SELECT sum(i) FROM t").scalar<int>() == 6);
  CHECK(c.prepare("SELECT i FROM t WHERE i > ?").bind(1, 5).first<int>() == std::nullopt);
  CHECK_THROWS_AS(c.prepare("SELECT i FROM t WHERE i > 5").scalar<int>(), DatabaseError);
  CHECK(c.last_insert_rowid() == 3);
}

TEST_CASE("errors name the connection's label and the cause") {
  const Connection c = memory();
  try {
    (void)c.prepare("SELECT nope FROM t");
    FAIL("no error");
  } catch (const DatabaseError& e) {
    CHECK(std::string(e.what()).find(":memory:") == 0);
    CHECK(std::string(e.what()).find("no such column: nope") != std::string::npos);
    CHECK(e.code() == ExitCode::database);
  }
  CHECK_THROWS_AS(c.exec("INSERT INTO missing VALUES (1)"), DatabaseError);
  CHECK_THROWS_AS(c.prepare("SELECT ?").bind(2, 1), DatabaseError);  // no parameter 2
}

TEST_CASE("transaction: commit keeps, an exception rolls back") {
  const Connection c = memory();
  {
    Transaction tx(c);
    c.exec("INSERT INTO t (i) VALUES (1)");
    tx.commit();
  }
  CHECK(count(c) == 1);
  try {
    Transaction tx(c);
    c.exec("INSERT INTO t (i) VALUES (2)");
    throw std::runtime_error("fault in the middle");
  } catch (const std::runtime_error&) {
  }
  CHECK(count(c) == 1);
  CHECK_FALSE(c.in_transaction());
}

TEST_CASE("transaction: a nested guard is a savepoint; its rollback keeps the outer work") {
  const Connection c = memory();
  {
    Transaction outer(c);
    c.exec("INSERT INTO t (i) VALUES (1)");
    {
      Transaction inner(c);
      c.exec("INSERT INTO t (i) VALUES (2)");
    }  // not committed: rolled back to the savepoint
    {
      Transaction inner(c);
      c.exec("INSERT INTO t (i) VALUES (3)");
      inner.commit();
    }
    CHECK(c.in_transaction());
    outer.commit();
  }
  CHECK(c.prepare("SELECT group_concat(i) FROM (SELECT i FROM t ORDER BY i)").scalar<std::string>() == "1,3");
}

TEST_CASE("a write lock held elsewhere: BEGIN IMMEDIATE waits the busy timeout, then DatabaseError") {
  TempDir tmp;
  const auto path = tmp.file("lock.db");
  Connection c(path, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
  c.exec("PRAGMA journal_mode = WAL; CREATE TABLE t (i INTEGER)");
  c.busy_timeout(150);
  RawDb other(path);
  REQUIRE(other.exec("BEGIN IMMEDIATE") == SQLITE_OK);
  const auto start = std::chrono::steady_clock::now();
  try {
    Transaction tx(c);
    FAIL("the lock was not seen");
  } catch (const DatabaseError& e) {
    CHECK(std::string(e.what()).find("database is locked") != std::string::npos);
  }
  CHECK(std::chrono::steady_clock::now() - start >= std::chrono::milliseconds(140));
  REQUIRE(other.exec("COMMIT") == SQLITE_OK);
  Transaction tx(c);  // free again
  tx.commit();
}

TEST_CASE("utc_now is ISO 8601 UTC with seconds") {
  CHECK(std::regex_match(store::detail::utc_now(), std::regex(R"(\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}Z)")));
}
