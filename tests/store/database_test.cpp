// Tests of the stock database: round trips, merging, the ledger invariant, migrations,
// refusals (newer, foreign, locked files), all-or-nothing changes and fault injection.
#include "shelfstage/store/database.hpp"

#include <doctest/doctest.h>
#include <fmt/format.h>
#include <sched.h>
#include <sys/mount.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <climits>
#include <cstdlib>
#include <fstream>
#include <map>

#include "shelfstage/store/csv.hpp"
#include "shelfstage/store/detail/sqlite.hpp"
#include "store/fixture.hpp"

using namespace shelfstage;
using store::Database;
using store::Part;
using store::PartKind;
using store::testing::RawDb;
using store::testing::TempDir;

namespace {

Part resistor(double ohms, int qty, std::string bin = "A1") {
  Part p;
  p.kind = PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  p.tol = units::Tolerance{0.05, 0.05};
  p.power_w = 0.25;
  p.bin = std::move(bin);
  return p;
}

Part capacitor(double farads, int qty) {
  Part p;
  p.kind = PartKind::capacitor;
  p.value = farads;
  p.qty = qty;
  p.tol = units::Tolerance{0.2, 0.8};
  p.volts = 25;
  p.dielectric = "electrolytic";
  p.package = "5 mm radial";
  p.bin = "C2";
  p.note = "for coupling";
  return p;
}

devices::DeviceRecord njfet(std::string name = "SJ-101") {
  devices::DeviceRecord d;
  d.name = std::move(name);
  d.kind = devices::DeviceKind::njfet;
  d.jfet.idss_a = {1e-3, 5e-3, 2.5e-3};
  d.jfet.vp_v = {-3.0, -0.5, std::nullopt};
  d.jfet.lambda_per_v = 0.005;
  d.jfet.cgs_f = 4.5e-12;
  d.jfet.cgd_f = 1.5e-12;
  d.jfet.tc_idss_per_k = -0.004;
  d.jfet.tc_vp_v_per_k = 0.0022;
  d.note = "low IDSS grade";
  return d;
}

devices::DeviceRecord npn(std::string name = "SQ-410") {
  devices::DeviceRecord d;
  d.name = std::move(name);
  d.kind = devices::DeviceKind::npn;
  d.bjt.hfe = {110, 450, 250};
  d.bjt.is_a = 1.5e-14;
  d.bjt.vaf_v = 80;
  d.bjt.cje_f = 6e-12;
  d.bjt.cjc_f = 3e-12;
  d.bjt.vce_sat_v = 0.25;
  return d;
}

Part transistor(PartKind kind, std::string device, int qty) {
  Part p;
  p.kind = kind;
  p.device = std::move(device);
  p.qty = qty;
  p.package = "TO-92";
  p.bin = "T1";
  return p;
}

/// Every field but the id.
void check_same(const Part& a, const Part& b) {
  CHECK(a.kind == b.kind);
  CHECK(a.value == b.value);
  CHECK(a.device == b.device);
  CHECK(a.tol == b.tol);
  CHECK(a.power_w == b.power_w);
  CHECK(a.volts == b.volts);
  CHECK(a.dielectric == b.dielectric);
  CHECK(a.package == b.package);
  CHECK(a.qty == b.qty);
  CHECK(a.reserved == b.reserved);
  CHECK(a.bin == b.bin);
  CHECK(a.note == b.note);
  CHECK(a.removed == b.removed);
}

/// Sum of the ledger deltas per part, read through the public API.
std::map<std::int64_t, int> ledger_sums(const Database& db) {
  std::map<std::int64_t, int> sums;
  for (const auto& e : db.ledger()) sums[e.part_id] += e.delta;
  return sums;
}

/// The stored quantity of every line (removed ones too), read raw.
void check_invariant(Database& db) {
  const auto sums = ledger_sums(db);
  auto st = db.impl().conn.prepare("SELECT id, qty FROM parts");
  while (st.step()) {
    const auto it = sums.find(st.int64(0));
    CHECK(st.int32(1) == (it == sums.end() ? 0 : it->second));
  }
  CHECK(db.check().ok());
}

/// The version 1 schema as it was first released, kept here verbatim so that the migration
/// test does not depend on the program's own copy.
constexpr const char* kVersion1Sql = R"sql(
PRAGMA application_id = 1397247046;
CREATE TABLE devices (
  name TEXT PRIMARY KEY COLLATE NOCASE,
  kind TEXT NOT NULL CHECK (kind IN ('NJFET', 'PJFET', 'NPN', 'PNP')),
  idss_min REAL, idss_max REAL, idss_typ REAL, vp_min REAL, vp_max REAL, vp_typ REAL,
  lambda REAL, cgs REAL, cgd REAL, tc_idss REAL, tc_vp REAL,
  hfe_min REAL, hfe_max REAL, hfe_typ REAL, is_a REAL, vaf REAL, cje REAL, cjc REAL, vce_sat REAL,
  note TEXT NOT NULL DEFAULT '');
CREATE TABLE parts (
  id INTEGER PRIMARY KEY,
  kind TEXT NOT NULL CHECK (kind IN ('R', 'C', 'NJFET', 'PJFET', 'NPN', 'PNP')),
  value REAL NOT NULL DEFAULT 0,
  device TEXT COLLATE NOCASE REFERENCES devices(name),
  tol_minus REAL, tol_plus REAL, power_w REAL, volts REAL,
  dielectric TEXT NOT NULL DEFAULT '', package TEXT NOT NULL DEFAULT '',
  qty INTEGER NOT NULL DEFAULT 0, reserved INTEGER NOT NULL DEFAULT 0,
  bin TEXT NOT NULL DEFAULT '', note TEXT NOT NULL DEFAULT '',
  removed INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1)),
  CHECK ((kind IN ('R', 'C')) = (device IS NULL)),
  CHECK (qty >= 0 AND reserved >= 0 AND reserved <= qty));
CREATE INDEX parts_value ON parts(kind, value);
CREATE INDEX parts_device ON parts(device);
CREATE TABLE pieces (
  id INTEGER PRIMARY KEY,
  label TEXT NOT NULL UNIQUE COLLATE NOCASE,
  device TEXT NOT NULL COLLATE NOCASE REFERENCES devices(name),
  idss REAL, vp REAL, hfe REAL, uncertainty REAL NOT NULL, note TEXT NOT NULL DEFAULT '');
CREATE INDEX pieces_device ON pieces(device);
CREATE TABLE ledger (
  id INTEGER PRIMARY KEY, at TEXT NOT NULL,
  part_id INTEGER NOT NULL REFERENCES parts(id), part_desc TEXT NOT NULL,
  delta INTEGER NOT NULL CHECK (delta <> 0), reason TEXT NOT NULL DEFAULT '', build_id INTEGER);
CREATE INDEX ledger_part ON ledger(part_id);
CREATE TRIGGER ledger_no_update BEFORE UPDATE ON ledger
BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER ledger_no_delete BEFORE DELETE ON ledger
BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER ledger_apply AFTER INSERT ON ledger
BEGIN UPDATE parts SET qty = qty + NEW.delta WHERE id = NEW.part_id; END;
PRAGMA user_version = 1;
)sql";

/// Versions 2 to 4 as released (the program's migrations of that time), verbatim, so that a
/// version 4 file is made here as that program made it.
constexpr const char* kVersions2To4Sql = R"sql(
CREATE TABLE designs (
  id             TEXT PRIMARY KEY,
  created        TEXT NOT NULL,              -- ISO 8601 UTC
  spec_json      TEXT NOT NULL,
  candidate_json TEXT NOT NULL
);

CREATE TABLE builds (
  id        INTEGER PRIMARY KEY,
  design_id TEXT NOT NULL REFERENCES designs(id),
  copies    INTEGER NOT NULL CHECK (copies > 0),
  state     TEXT NOT NULL CHECK (state IN ('built', 'undone')),
  created   TEXT NOT NULL,                   -- ISO 8601 UTC
  undone    TEXT NULL,                       -- ISO 8601 UTC when undone
  CHECK ((state = 'undone') = (undone IS NOT NULL))
);
CREATE INDEX builds_design ON builds(design_id);

CREATE TABLE build_lines (
  id          INTEGER PRIMARY KEY,
  build_id    INTEGER NOT NULL REFERENCES builds(id) ON DELETE CASCADE,
  part_id     INTEGER NOT NULL REFERENCES parts(id),
  qty         INTEGER NOT NULL CHECK (qty > 0),  -- pieces taken for all copies
  designators TEXT NOT NULL DEFAULT ''           -- "R1,R3"
);
CREATE INDEX build_lines_build ON build_lines(build_id);
CREATE INDEX build_lines_part ON build_lines(part_id);

CREATE TABLE reservations (
  id        INTEGER PRIMARY KEY,
  design_id TEXT REFERENCES designs(id) ON DELETE CASCADE,  -- NULL: held outside any design
  part_id   INTEGER NOT NULL REFERENCES parts(id),
  qty       INTEGER NOT NULL CHECK (qty > 0),
  created   TEXT NOT NULL                    -- ISO 8601 UTC
);
CREATE INDEX reservations_part ON reservations(part_id);
CREATE INDEX reservations_design ON reservations(design_id);

INSERT INTO reservations (design_id, part_id, qty, created)
  SELECT NULL, id, reserved, strftime('%Y-%m-%dT%H:%M:%SZ', 'now') FROM parts WHERE reserved > 0;

CREATE TRIGGER reservations_hold AFTER INSERT ON reservations
BEGIN UPDATE parts SET reserved = reserved + NEW.qty WHERE id = NEW.part_id; END;
CREATE TRIGGER reservations_release AFTER DELETE ON reservations
BEGIN UPDATE parts SET reserved = reserved - OLD.qty WHERE id = OLD.part_id; END;
CREATE TRIGGER reservations_change AFTER UPDATE OF qty, part_id ON reservations
BEGIN
  UPDATE parts SET reserved = reserved - OLD.qty WHERE id = OLD.part_id;
  UPDATE parts SET reserved = reserved + NEW.qty WHERE id = NEW.part_id;
END;

ALTER TABLE devices ADD COLUMN removed INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1));
CREATE INDEX parts_line ON parts(kind, bin COLLATE NOCASE, value);

ALTER TABLE devices ADD COLUMN v_max REAL;      -- volts: VDS(max) or VCEO
ALTER TABLE devices ADD COLUMN v_rev_max REAL;  -- volts: gate-source reverse or VEBO
ALTER TABLE devices ADD COLUMN p_max REAL;      -- watts at 25 °C ambient
ALTER TABLE devices ADD COLUMN p_derate REAL;   -- watts per kelvin above 25 °C
PRAGMA user_version = 4;
)sql";

/// Every row of a table as text (each column quoted as SQL writes it), in row order; only the
/// columns given (default: all the table has).
std::string rows_of(RawDb& raw, const std::string& table, std::string columns = "") {
  if (columns.empty())
    columns = raw.text("SELECT group_concat('quote(' || name || ')', ' || '','' || ') FROM pragma_table_info('" +
                       table + "')");
  return raw.text("SELECT group_concat(r, '|') FROM (SELECT " + columns + " AS r FROM " + table + " ORDER BY rowid)");
}

/// A version 4 file with a row in every table: devices (one removed, ratings stated), parts
/// (one removed), pieces, the ledger, reservations, designs, builds and their lines.
void make_version4(const std::filesystem::path& path) {
  RawDb raw(path);
  REQUIRE(raw.exec("PRAGMA journal_mode = WAL") == SQLITE_OK);
  REQUIRE(raw.exec(kVersion1Sql) == SQLITE_OK);
  REQUIRE(raw.exec(kVersions2To4Sql) == SQLITE_OK);
  REQUIRE(
      raw.exec(
          "INSERT INTO devices (name, kind, idss_min, idss_max, vp_min, vp_max, lambda, cgs, cgd, v_max) "
          "VALUES ('SJ-101', 'NJFET', 1e-3, 5e-3, -3, -0.5, 0.005, 4.5e-12, 1.5e-12, 25);"
          "INSERT INTO devices (name, kind, hfe_min, hfe_max, is_a, vaf, v_max, v_rev_max, p_max, p_derate) "
          "VALUES ('SQ-410', 'NPN', 110, 450, 1.5e-14, 80, 40, 6, 0.5, 0.004);"
          "INSERT INTO devices (name, kind, hfe_min, hfe_max, removed) VALUES ('SQ-OLD', 'PNP', 50, 100, 1);"
          "INSERT INTO parts (id, kind, value, tol_minus, tol_plus, power_w, bin, note) "
          "VALUES (1, 'R', 4700, 0.05, 0.05, 0.25, 'A3', 'kit');"
          "INSERT INTO parts (id, kind, device, bin, package) VALUES (2, 'NPN', 'SQ-410', 'T1', 'TO-92');"
          "INSERT INTO parts (id, kind, device, bin, removed) VALUES (3, 'PNP', 'SQ-OLD', 'T2', 1);"
          "INSERT INTO parts (id, kind, value, volts, dielectric, bin) VALUES (4, 'C', 1e-7, 50, 'film', 'B1');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
          "VALUES ('2026-01-02T03:04:05Z', 1, 'R 4.7k 5% bin A3', 12, 'import');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
          "VALUES ('2026-01-02T03:04:05Z', 2, 'NPN SQ-410 bin T1', 4, 'import');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
          "VALUES ('2026-01-02T03:04:05Z', 3, 'PNP SQ-OLD bin T2', 2, 'import');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
          "VALUES ('2026-01-03T00:00:00Z', 3, 'PNP SQ-OLD bin T2', -2, 'device SQ-OLD removed');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
          "VALUES ('2026-01-02T03:04:05Z', 4, 'C 100n bin B1', 9, 'import');"
          "INSERT INTO designs (id, created, spec_json, candidate_json) "
          "VALUES ('s0123abcd', '2026-01-04T00:00:00Z', '{}', '{}');"
          "INSERT INTO reservations (design_id, part_id, qty, created) "
          "VALUES ('s0123abcd', 1, 2, '2026-01-04T00:00:00Z');"
          "INSERT INTO builds (id, design_id, copies, state, created) "
          "VALUES (1, 's0123abcd', 1, 'built', '2026-01-05T00:00:00Z');"
          "INSERT INTO ledger (at, part_id, part_desc, delta, reason, build_id) "
          "VALUES ('2026-01-05T00:00:00Z', 2, 'NPN SQ-410 bin T1', -1, 'build 1', 1);"
          "INSERT INTO build_lines (build_id, part_id, qty, designators) VALUES (1, 2, 1, 'Q1');"
          "INSERT INTO pieces (label, device, hfe, uncertainty, note) VALUES ('Q3', 'SQ-410', 287, 0.05, 'bench');") ==
      SQLITE_OK);
  REQUIRE(raw.integer("PRAGMA user_version") == 4);
}

/// The columns of version 4's devices table, in its order.
constexpr const char* kVersion4DeviceColumns =
    "quote(name) || ',' || quote(kind) || ',' || quote(idss_min) || ',' || quote(idss_max) || ',' || "
    "quote(idss_typ) || ',' || quote(vp_min) || ',' || quote(vp_max) || ',' || quote(vp_typ) || ',' || "
    "quote(lambda) || ',' || quote(cgs) || ',' || quote(cgd) || ',' || quote(tc_idss) || ',' || quote(tc_vp) || "
    "',' || quote(hfe_min) || ',' || quote(hfe_max) || ',' || quote(hfe_typ) || ',' || quote(is_a) || ',' || "
    "quote(vaf) || ',' || quote(cje) || ',' || quote(cjc) || ',' || quote(vce_sat) || ',' || quote(note) || ',' || "
    "quote(removed) || ',' || quote(v_max) || ',' || quote(v_rev_max) || ',' || quote(p_max) || ',' || "
    "quote(p_derate)";

}  // namespace

TEST_CASE("create, then open: an empty stock at the current schema version") {
  TempDir tmp;
  const auto path = tmp.file("sub/dir/stock.db");  // folders are made as needed
  {
    const Database db = Database::create(path);
    CHECK(db.schema_version() == store::kSchemaVersion);
    CHECK(db.path() == path);
  }
  Database db = Database::open(path);
  CHECK(db.schema_version() == store::kSchemaVersion);
  CHECK_FALSE(db.read_only_reason());
  CHECK(db.parts().empty());
  CHECK(db.ledger().empty());
  CHECK(db.check().ok());
  CHECK_THROWS_AS(Database::create(path), InputError);  // never overwrites
}

TEST_CASE("open: a missing file is an InputError that points at init") {
  TempDir tmp;
  try {
    (void)Database::open(tmp.file("nothing.db"));
    FAIL("opened a missing file");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("nothing.db") != std::string::npos);
    CHECK(std::string(e.what()).find("shelfstage init") != std::string::npos);
  }
  CHECK_FALSE(std::filesystem::exists(tmp.file("nothing.db")));
}

TEST_CASE("every connection: WAL, synchronous FULL, foreign keys on, a 5 s busy timeout") {
  TempDir tmp;
  (void)Database::create(tmp.file("s.db"));
  Database db = Database::open(tmp.file("s.db"));
  const auto& conn = db.impl().conn;
  CHECK(conn.prepare("PRAGMA journal_mode").scalar<std::string>() == "wal");
  CHECK(conn.prepare("PRAGMA foreign_keys").scalar<int>() == 1);
  CHECK(conn.prepare("PRAGMA synchronous").scalar<int>() == 2);  // 2 = FULL (SQLite docs)
  CHECK(conn.prepare("PRAGMA busy_timeout").scalar<int>() == 5000);
  CHECK(conn.prepare("PRAGMA application_id").scalar<std::int64_t>() == 0x53484C46);
}

TEST_CASE("parts, devices and pieces come back as they went in") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  devices::DeviceRecord rated = npn();
  rated.ratings.v_max_v = 40;
  rated.ratings.v_rev_max_v = 6;
  rated.ratings.p_max_w = 0.5;
  db.put_devices({njfet(), rated});
  CHECK(db.device_records().size() == 2);
  {
    const auto q = db.device(rated.name);
    REQUIRE(q);
    CHECK(q->ratings.v_max_v == 40.0);
    CHECK(q->ratings.v_rev_max_v == 6.0);
    CHECK(q->ratings.p_max_w == 0.5);
    CHECK_FALSE(q->ratings.derate_w_per_k);
    CHECK_FALSE(db.device("SJ-101")->ratings.any());
  }
  const auto j = db.device("sj-101");  // names compare without case
  REQUIRE(j);
  CHECK(j->name == "SJ-101");
  CHECK(j->kind == devices::DeviceKind::njfet);
  CHECK(j->jfet.idss_a.min == 1e-3);
  CHECK(j->jfet.idss_a.max == 5e-3);
  CHECK(j->jfet.idss_a.typ == 2.5e-3);
  CHECK(j->jfet.vp_v.min == -3.0);
  CHECK(j->jfet.vp_v.max == -0.5);
  CHECK_FALSE(j->jfet.vp_v.typ);
  CHECK(j->jfet.lambda_per_v == 0.005);
  CHECK(j->jfet.cgs_f == 4.5e-12);
  CHECK(j->jfet.cgd_f == 1.5e-12);
  CHECK(j->jfet.tc_idss_per_k == -0.004);
  CHECK(j->jfet.tc_vp_v_per_k == 0.0022);
  CHECK(j->note == "low IDSS grade");
  const auto b = db.device("SQ-410");
  REQUIRE(b);
  CHECK(b->bjt.hfe.min == 110);
  CHECK(b->bjt.hfe.max == 450);
  CHECK(b->bjt.hfe.typ == 250);
  CHECK(b->bjt.is_a == 1.5e-14);
  CHECK(b->bjt.vaf_v == 80);
  CHECK(b->bjt.cje_f == 6e-12);
  CHECK(b->bjt.cjc_f == 3e-12);
  CHECK(b->bjt.vce_sat_v == 0.25);
  CHECK_FALSE(db.device("nope"));

  const std::vector<Part> in = {resistor(4700, 10), capacitor(100e-6, 4), transistor(PartKind::njfet, "sj-101", 6),
                                transistor(PartKind::npn, "SQ-410", 3)};
  for (const auto& p : in) {
    const auto id = db.add_part(p, "first stock");
    const auto back = db.part(id);
    REQUIRE(back);
    Part want = p;
    if (!store::is_passive(p.kind)) want.device = p.kind == PartKind::njfet ? "SJ-101" : "SQ-410";
    check_same(*back, want);
  }
  const auto all = db.parts();
  REQUIRE(all.size() == 4);
  // Ordered by kind (R, C, NJFET, ..., as docs/interface.md lists them), then value.
  CHECK(all[0].kind == PartKind::resistor);
  CHECK(all[1].kind == PartKind::capacitor);
  CHECK(all[2].kind == PartKind::njfet);
  CHECK(all[3].kind == PartKind::npn);

  devices::MeasuredPiece m;
  m.label = "J1";
  m.device = "sj-101";
  m.idss_a = 2.9e-3;
  m.vp_v = -1.45;
  m.uncertainty = 0.03;
  m.note = "two-resistor method";
  db.add_piece(m);
  const auto piece = db.piece("j1");
  REQUIRE(piece);
  CHECK(piece->label == "J1");
  CHECK(piece->device == "SJ-101");
  CHECK(piece->idss_a == 2.9e-3);
  CHECK(piece->vp_v == -1.45);
  CHECK_FALSE(piece->hfe);
  CHECK(piece->uncertainty == 0.03);
  CHECK(piece->note == "two-resistor method");
  CHECK_THROWS_AS(db.add_piece(m), InputError);  // labels are unique
  m.label = "J9";
  m.device = "SJ-999";
  CHECK_THROWS_AS(db.add_piece(m), InputError);  // device must exist
  m.device = "SQ-410";
  CHECK_THROWS_AS(db.add_piece(m), InputError);  // JFET figures on a BJT
  CHECK(db.pieces().size() == 1);
  check_invariant(db);
}

TEST_CASE("add_part merges an identical line and keeps different bins apart") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  const auto a = db.add_part(resistor(4700, 10, "A3"), "bag 1");
  // 4.7k written another way: the same double within 1e-9 relative.
  const auto b = db.add_part(resistor(4700 * (1 + 1e-12), 5, "a3"), "bag 2");
  CHECK(a == b);
  CHECK(db.part(a)->qty == 15);
  const auto c = db.add_part(resistor(4700, 2, "B1"), "bag 3");  // the same value in another bin
  CHECK(c != a);
  Part other_tol = resistor(4700, 1, "A3");
  other_tol.tol = units::Tolerance{0.01, 0.01};
  CHECK(db.add_part(other_tol, "bag 4") != a);
  Part no_rating = resistor(4700, 1, "A3");
  no_rating.power_w.reset();
  CHECK(db.add_part(no_rating, "bag 5") != a);
  CHECK(db.parts().size() == 4);
  CHECK(db.ledger().size() == 5);
  check_invariant(db);
}

TEST_CASE("add_part validates: InputError naming field and value, nothing written") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({njfet()});
  auto refused = [&](const Part& p, std::string_view words) {
    try {
      db.add_part(p, "test");
      FAIL("accepted");
    } catch (const InputError& e) {
      CHECK_MESSAGE(std::string(e.what()).find(words) != std::string::npos, e.what());
    }
  };
  refused(resistor(0, 1), "value 0 must be above zero");
  refused(resistor(100, -1), "qty -1 is negative");
  Part r = resistor(100, 1);
  r.reserved = 2;
  refused(r, "reserved 2 is more than qty 1");
  r = resistor(100, 1);
  r.power_w = -0.25;
  refused(r, "power -0.25 must be above zero");
  Part c = capacitor(1e-6, 1);
  c.volts = 0;
  refused(c, "volts 0 must be above zero");
  refused(transistor(PartKind::njfet, "SJ-999", 1), "device 'SJ-999' is not in the device list");
  refused(transistor(PartKind::pnp, "SJ-101", 1), "kind PNP does not match device 'SJ-101' (NJFET)");
  CHECK(db.parts().empty());
  CHECK(db.ledger().empty());
}

TEST_CASE("the ledger sums to the quantity through adds, adjusts and removes") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  const auto r = db.add_part(resistor(1000, 20), "import");
  const auto c = db.add_part(capacitor(10e-6, 5), "import");
  db.adjust(r, -3, "lost under the bench");
  db.adjust(r, +1, "found one");
  db.adjust(c, -5, "used up");
  db.add_part(resistor(1000, 7), "second bag");
  CHECK(db.part(r)->qty == 25);
  CHECK(db.part(c)->qty == 0);
  db.remove_part(r, "bin emptied");
  check_invariant(db);

  const auto log = db.ledger();
  REQUIRE(log.size() == 7);
  CHECK(log[2].delta == -3);
  CHECK(log[2].reason == "lost under the bench");
  CHECK(log[2].part == "R 1k 5% 0.25W bin A1");
  CHECK(log.back().delta == -25);
  CHECK_FALSE(log.back().build_id);
  for (const auto& e : log) CHECK(e.when.size() == 20);  // 2026-12-01T21:53:00Z

  // A removed line leaves the listing, keeps its history, and takes no adjustments.
  const auto parts = db.parts();
  REQUIRE(parts.size() == 1);
  CHECK(parts[0].id == c);
  const auto gone = db.part(r);
  REQUIRE(gone);
  CHECK(gone->removed);
  CHECK(gone->qty == 0);
  CHECK_THROWS_AS(db.adjust(r, 1, "x"), InputError);
  CHECK_THROWS_AS(db.remove_part(r, "again"), InputError);
  CHECK_THROWS_AS(db.adjust(999, 1, "x"), InputError);
  // The same line added again comes back as the same line.
  CHECK(db.add_part(resistor(1000, 4), "new bag") == r);
  CHECK_FALSE(db.part(r)->removed);
  check_invariant(db);
}

TEST_CASE("adjust below zero or below the reserved count is refused and writes nothing") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  Part p = resistor(2200, 5);
  p.reserved = 2;
  const auto id = db.add_part(p, "import");
  const auto before = db.ledger().size();
  try {
    db.adjust(id, -6, "too many");
    FAIL("went below zero");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("below zero") != std::string::npos);
  }
  try {
    db.adjust(id, -4, "into the reserve");
    FAIL("went below the reserve");
  } catch (const InputError& e) {
    CHECK(std::string(e.what()).find("2 reserved") != std::string::npos);
  }
  CHECK_THROWS_AS(db.remove_part(id, "reserved pieces"), InputError);
  CHECK(db.part(id)->qty == 5);
  CHECK(db.part(id)->reserved == 2);
  CHECK(db.ledger().size() == before);
  db.adjust(id, -3, "down to the reserve");
  CHECK(db.part(id)->qty == 2);
  check_invariant(db);
}

TEST_CASE("add_parts is all or nothing when one part is invalid") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  const std::vector<Part> batch = {resistor(100, 5), resistor(220, 5), resistor(-1, 5), resistor(330, 5)};
  CHECK_THROWS_AS(db.add_parts(batch, "import"), InputError);
  CHECK(db.parts().empty());
  CHECK(db.ledger().empty());
  db.add_parts({resistor(100, 5), resistor(220, 5)}, "import");
  CHECK(db.parts().size() == 2);
}

TEST_CASE("fault injection: a write failing in the middle of an import leaves the old state") {
  // In the manner of SQLite's own ioerr tests: make the third ledger insert fail.
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.add_part(resistor(47, 1), "before");
  {
    RawDb raw(tmp.file("s.db"));
    REQUIRE(raw.exec("CREATE TABLE fault_count (n INTEGER); INSERT INTO fault_count VALUES (0);"
                     "CREATE TRIGGER fault BEFORE INSERT ON ledger BEGIN "
                     "UPDATE fault_count SET n = n + 1; "
                     "SELECT RAISE(ABORT, 'injected fault') WHERE (SELECT n FROM fault_count) = 3; END;") == SQLITE_OK);
  }
  try {
    db.add_parts({resistor(100, 5), resistor(220, 5), resistor(330, 5), resistor(470, 5)}, "import");
    FAIL("the fault did not fire");
  } catch (const DatabaseError& e) {
    CHECK(std::string(e.what()).find("injected fault") != std::string::npos);
  }
  CHECK(db.parts().size() == 1);
  CHECK(db.ledger().size() == 1);
  RawDb raw(tmp.file("s.db"));
  CHECK(raw.integer("SELECT n FROM fault_count") == 0);  // the counter rolled back too
  REQUIRE(raw.exec("DROP TRIGGER fault; DROP TABLE fault_count") == SQLITE_OK);
  CHECK(db.check().ok());
}

TEST_CASE("check finds a tampered quantity, a broken reserve, and a touched ledger is refused") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  Database db = Database::create(path);
  const auto id = db.add_part(resistor(1000, 10), "import");
  REQUIRE(db.check().ok());
  RawDb raw(path);
  // The ledger is append-only: UPDATE and DELETE are refused by triggers.
  CHECK(raw.exec("UPDATE ledger SET delta = 99") == SQLITE_CONSTRAINT);
  CHECK(raw.exec("DELETE FROM ledger") == SQLITE_CONSTRAINT);
  CHECK(raw.integer("SELECT sum(delta) FROM ledger") == 10);

  REQUIRE(raw.exec("UPDATE parts SET qty = 12 WHERE id = " + std::to_string(id)) == SQLITE_OK);
  auto report = db.check();
  CHECK_FALSE(report.ok());
  REQUIRE(report.ledger.size() == 1);
  CHECK(report.ledger[0].find("qty 12 but the ledger sums to 10") != std::string::npos);

  REQUIRE(raw.exec("UPDATE parts SET qty = 10") == SQLITE_OK);
  REQUIRE(raw.exec("PRAGMA ignore_check_constraints = ON; UPDATE parts SET reserved = 11") == SQLITE_OK);
  report = db.check();
  CHECK(report.ledger.empty());
  bool over = false, unheld = false;
  for (const auto& s : report.other) {
    over = over || s.find("reserved 11 is more than qty 10") != std::string::npos;
    unheld = unheld || s.find("reserved 11 but reservations hold 0") != std::string::npos;
  }
  CHECK(over);
  CHECK(unheld);

  REQUIRE(raw.exec("UPDATE parts SET reserved = 0; DROP TRIGGER ledger_no_delete") == SQLITE_OK);
  report = db.check();
  CHECK(report.other.empty());
  CHECK(report.structure == std::vector<std::string>{"trigger ledger_no_delete is missing"});
}

TEST_CASE("check reports a dangling foreign key") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  Database db = Database::create(path);
  db.add_part(resistor(1000, 10), "import");
  RawDb raw(path);  // foreign keys are off on this raw connection (the SQLite default)
  REQUIRE(raw.exec("INSERT INTO reservations (design_id, part_id, qty, created) VALUES ('nope', 1, 1, 'x')") ==
          SQLITE_OK);
  const auto report = db.check();
  REQUIRE(report.foreign_keys.size() == 1);
  CHECK(report.foreign_keys[0] == "reservations row 1 refers to a missing designs row");
}

TEST_CASE("reservations move parts.reserved; shortfalls are InfeasibleError") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  const auto id = db.add_part(resistor(10e3, 6), "import");
  auto& impl = db.impl();
  impl.immediate([&] {
    impl.conn.prepare("INSERT INTO designs (id, created, spec_json, candidate_json) VALUES ('d1', 'now', '{}', '{}')")
        .run();
    impl.reserve(std::string("d1"), id, 4);
  });
  CHECK(db.part(id)->reserved == 4);
  CHECK(db.part(id)->available() == 2);
  CHECK_THROWS_AS(impl.immediate([&] { impl.reserve(std::nullopt, id, 3); }), InfeasibleError);
  CHECK_THROWS_AS(impl.immediate([&] { impl.record_change(id, -3, "build"); }), InfeasibleError);
  CHECK(db.check().ok());
  // Deleting the design releases its reservations (ON DELETE CASCADE, then the trigger).
  impl.immediate([&] { impl.conn.prepare("DELETE FROM designs WHERE id = 'd1'").run(); });
  CHECK(db.part(id)->reserved == 0);
  impl.immediate([&] { impl.record_change(id, -6, "build 1", std::int64_t{1}); });
  CHECK(db.part(id)->qty == 0);
  CHECK(db.ledger().back().build_id == 1);
  check_invariant(db);
}

TEST_CASE("ledger filters: since, value, device") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({npn()});
  db.add_part(resistor(4700, 3), "a");
  db.add_part(capacitor(4700e-12, 3), "b");
  db.add_part(transistor(PartKind::npn, "SQ-410", 2), "c");
  CHECK(db.ledger({"2000-01-01", std::nullopt, std::nullopt}).size() == 3);
  CHECK(db.ledger({"2000-01-01 10:00", std::nullopt, std::nullopt}).size() == 3);
  CHECK(db.ledger({"9999-12-31T23:59:59Z", std::nullopt, std::nullopt}).empty());
  CHECK(db.ledger({std::nullopt, 4700.0, std::nullopt}).size() == 1);
  CHECK(db.ledger({std::nullopt, 4.7e-9, std::nullopt}).size() == 1);
  CHECK(db.ledger({std::nullopt, std::nullopt, "sq-410"}).size() == 1);
  CHECK(db.ledger({std::nullopt, std::nullopt, "SJ-999"}).empty());
  CHECK_THROWS_AS(db.ledger({"yesterday", std::nullopt, std::nullopt}), InputError);
  CHECK_THROWS_AS(db.ledger({"2026-13-01", std::nullopt, std::nullopt}), InputError);
  CHECK_THROWS_AS(db.ledger({"2026-12-01T10:00+02:00", std::nullopt, std::nullopt}), InputError);
}

TEST_CASE("put_devices replaces by name, and refuses a kind change while the device is used") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({njfet()});
  auto changed = njfet("sj-101");
  changed.jfet.idss_a = {2e-3, 6e-3, std::nullopt};
  db.put_devices({changed});
  REQUIRE(db.device_records().size() == 1);
  CHECK(db.device("SJ-101")->jfet.idss_a.min == 2e-3);
  CHECK(db.device_records()[0].name == "SJ-101");  // the first spelling stays

  db.add_part(transistor(PartKind::njfet, "SJ-101", 2), "import");
  auto other = npn("SJ-101");
  CHECK_THROWS_AS(db.put_devices({other}), InputError);
  auto bad = njfet("SJ-102");
  bad.jfet.vp_v = {0.5, 3, std::nullopt};  // N-channel with a positive VGS(off)
  CHECK_THROWS_AS(db.put_devices({njfet("SJ-103"), bad}), InputError);
  CHECK_FALSE(db.device("SJ-103"));  // all or nothing
}

TEST_CASE("migration: a version 1 file opens at the current version with its data kept") {
  TempDir tmp;
  const auto path = tmp.file("old.db");
  {
    RawDb raw(path);
    REQUIRE(raw.exec("PRAGMA journal_mode = WAL") == SQLITE_OK);
    REQUIRE(raw.exec(kVersion1Sql) == SQLITE_OK);
    REQUIRE(raw.exec("INSERT INTO devices (name, kind, hfe_min, hfe_max, is_a, vaf, cje, cjc, vce_sat) "
                     "VALUES ('SQ-410', 'NPN', 110, 450, 1.5e-14, 80, 6e-12, 3e-12, 0.2);"
                     "INSERT INTO parts (id, kind, value, tol_minus, tol_plus, power_w, bin) "
                     "VALUES (1, 'R', 4700, 0.05, 0.05, 0.25, 'A3');"
                     "INSERT INTO parts (id, kind, device, bin) VALUES (2, 'NPN', 'SQ-410', 'T1');"
                     "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
                     "VALUES ('2026-01-02T03:04:05Z', 1, 'R 4.7k 5% bin A3', 12, 'import');"
                     "INSERT INTO ledger (at, part_id, part_desc, delta, reason) "
                     "VALUES ('2026-01-02T03:04:05Z', 2, 'NPN SQ-410 bin T1', 4, 'import');"
                     "UPDATE parts SET reserved = 3 WHERE id = 1;"
                     "INSERT INTO pieces (label, device, hfe, uncertainty) VALUES ('Q3', 'SQ-410', 287, 0.05);") ==
            SQLITE_OK);
    REQUIRE(raw.integer("PRAGMA user_version") == 1);
  }
  Database db = Database::open(path);
  CHECK(db.schema_version() == store::kSchemaVersion);
  CHECK_FALSE(db.read_only_reason());  // the version 1 text, laid out otherwise, is no damage
  RawDb raw(path);
  CHECK(raw.integer("PRAGMA user_version") == store::kSchemaVersion);
  CHECK(raw.integer("SELECT count(*) FROM sqlite_schema WHERE type = 'index' AND name = 'parts_line'") == 1);
  CHECK(raw.integer("SELECT count(*) FROM pragma_table_info('devices') WHERE name = 'removed'") == 1);
  const auto parts = db.parts();
  REQUIRE(parts.size() == 2);
  CHECK(parts[0].value == 4700);
  CHECK(parts[0].qty == 12);
  CHECK(parts[0].reserved == 3);
  CHECK(parts[0].tol == units::Tolerance{0.05, 0.05});
  CHECK(parts[1].device == "SQ-410");
  CHECK(parts[1].qty == 4);
  CHECK(db.ledger().size() == 2);
  CHECK(db.ledger()[0].when == "2026-01-02T03:04:05Z");
  REQUIRE(db.piece("Q3"));
  CHECK(db.piece("Q3")->hfe == 287);
  // The reserve of version 1 is held by a reservation of no design.
  CHECK(raw.integer("SELECT count(*) FROM reservations WHERE design_id IS NULL AND qty = 3") == 1);
  for (const char* table : {"designs", "builds", "build_lines", "reservations"})
    CHECK(raw.integer(std::string("SELECT count(*) FROM sqlite_schema WHERE type = 'table' AND name = '") + table +
                      "'") == 1);
  CHECK(db.check().ok());
  // The new triggers work on migrated data.
  db.adjust(parts[0].id, -9, "use the free ones");
  CHECK_THROWS_AS(db.adjust(parts[0].id, -1, "into the reserve"), InputError);
  check_invariant(db);
}

TEST_CASE("migration: a version 4 file takes op-amps, with every row, the ledger and the keys kept") {
  TempDir tmp;
  const auto path = tmp.file("v4.db");
  make_version4(path);
  const std::vector<std::string> tables = {"parts",   "pieces", "ledger",     "reservations",
                                           "designs", "builds", "build_lines"};
  std::map<std::string, std::string> before;
  std::string devices_before;
  {
    RawDb raw(path);
    for (const auto& t : tables) before[t] = rows_of(raw, t);
    devices_before = rows_of(raw, "devices", kVersion4DeviceColumns);
    REQUIRE_FALSE(before["ledger"].empty());
  }
  {
    Database db = Database::open(path);
    CHECK(db.schema_version() == store::kSchemaVersion);
    CHECK(store::kSchemaVersion == 5);
    CHECK_FALSE(db.read_only_reason());  // the rebuilt tables are what a new file has
    CHECK(db.check().ok());
    CHECK(db.ledger().size() == 6);
    CHECK(db.device_records().size() == 2);  // SQ-OLD stays removed
  }
  RawDb raw(path);
  CHECK(raw.integer("PRAGMA user_version") == 5);
  // Every row of every table, as it was (the devices' columns of version 4; the op-amp
  // columns are NULL).
  for (const auto& t : tables) {
    CAPTURE(t);
    CHECK(rows_of(raw, t) == before[t]);
  }
  CHECK(rows_of(raw, "devices", kVersion4DeviceColumns) == devices_before);
  CHECK(raw.integer("SELECT count(*) FROM devices WHERE channels IS NOT NULL OR gbw IS NOT NULL OR in_a IS NOT "
                    "NULL") == 0);
  CHECK(raw.text("SELECT removed FROM devices WHERE name = 'SQ-OLD'") == "1");
  CHECK(raw.integer("SELECT count(*) FROM pragma_foreign_key_check") == 0);
  for (const char* index : {"parts_value", "parts_device", "parts_line", "pieces_device", "ledger_part"})
    CHECK(raw.integer(std::string("SELECT count(*) FROM sqlite_schema WHERE type = 'index' AND name = '") + index +
                      "'") == 1);
  // The keys still hold: parts and pieces refer to devices, the ledger and builds to parts.
  REQUIRE(raw.exec("PRAGMA foreign_keys = ON") == SQLITE_OK);
  CHECK(raw.exec("INSERT INTO parts (kind, device) VALUES ('NPN', 'NO-SUCH')") != SQLITE_OK);
  CHECK(raw.exec("INSERT INTO pieces (label, device, uncertainty) VALUES ('X', 'NO-SUCH', 0.03)") != SQLITE_OK);
  CHECK(raw.exec("DELETE FROM devices WHERE name = 'SQ-410'") != SQLITE_OK);
  CHECK(raw.exec("INSERT INTO build_lines (build_id, part_id, qty) VALUES (1, 99, 1)") != SQLITE_OK);
  CHECK(raw.exec("DELETE FROM parts WHERE id = 2") != SQLITE_OK);
  // The kind CHECKs take OPAMP now (and nothing else new).
  CHECK(raw.exec("INSERT INTO devices (name, kind) VALUES ('SA-X', 'TRIODE')") != SQLITE_OK);
  CHECK(raw.exec("INSERT INTO parts (kind, device) VALUES ('TRIODE', 'SQ-410')") != SQLITE_OK);

  // Op-amps go in through the library, and the triggers of the ledger and reservations still
  // act on the rebuilt parts table.
  Database db = Database::open(path);
  devices::DeviceRecord a;
  a.name = "SA-210";
  a.kind = devices::DeviceKind::opamp;
  a.opamp.channels = 2;
  a.opamp.vs_min_v = 10;
  a.opamp.vs_max_v = 36;
  a.opamp.gbw_hz.typ = 1.1e6;
  a.opamp.slew_v_per_s.typ = 5e5;
  a.opamp.aol.typ = 2e5;
  a.opamp.out_drop_hi_v = a.opamp.out_drop_lo_v = 1.5;
  a.opamp.out_drop_ohm = 100;
  a.opamp.iout_max_a = 25e-3;
  a.opamp.cm_drop_hi_v = a.opamp.cm_drop_lo_v = 2;
  a.opamp.vos_max_v = 5e-3;
  a.opamp.ib_max_a = 400e-9;
  db.put_devices({a});
  Part line;
  line.kind = PartKind::opamp;
  line.device = "sa-210";
  line.qty = 6;
  line.bin = "E1";
  const auto id = db.add_part(line, "packages");
  CHECK(db.part(id)->device == "SA-210");
  CHECK(db.part(id)->qty == 6);
  db.adjust(1, -1, "used one");
  CHECK(db.part(1)->qty == 11);
  CHECK(db.ledger().size() == 8);
  check_invariant(db);
  CHECK(db.check().ok());
}

TEST_CASE("migration to version 5 is all or nothing: a broken key in a version 4 file leaves it as it was") {
  TempDir tmp;
  const auto path = tmp.file("v4.db");
  make_version4(path);
  std::string schema_before;
  {
    RawDb raw(path);
    // A stock line naming a device that is not there (foreign keys are off on this connection).
    REQUIRE(raw.exec("INSERT INTO parts (id, kind, device) VALUES (9, 'NPN', 'GONE')") == SQLITE_OK);
    schema_before = raw.text("SELECT group_concat(sql, ';') FROM (SELECT sql FROM sqlite_schema ORDER BY name)");
  }
  CHECK_THROWS_WITH_AS(Database::open(path), doctest::Contains("broke a foreign key in table parts; nothing changed"),
                       DatabaseError);
  RawDb raw(path);
  CHECK(raw.integer("PRAGMA user_version") == 4);
  CHECK(raw.text("SELECT group_concat(sql, ';') FROM (SELECT sql FROM sqlite_schema ORDER BY name)") == schema_before);
  CHECK(raw.integer("SELECT count(*) FROM parts") == 5);
}

TEST_CASE("a file of a newer schema is refused with DatabaseError, untouched") {
  TempDir tmp;
  const auto path = tmp.file("stock.db");
  (void)Database::create(path);
  {
    RawDb raw(path);
    REQUIRE(raw.exec("PRAGMA user_version = 7") == SQLITE_OK);
  }
  try {
    (void)Database::open(path);
    FAIL("opened a newer file");
  } catch (const DatabaseError& e) {
    CHECK(std::string(e.what()) ==
          path.string() + fmt::format(": schema version 7 is newer than this shelfstage ({}); upgrade shelfstage",
                                      store::kSchemaVersion));
  }
  RawDb raw(path);
  CHECK(raw.integer("PRAGMA user_version") == 7);
}

TEST_CASE("files that are not shelfstage databases are refused cleanly") {
  TempDir tmp;
  const auto text = tmp.file("notes.db");
  std::ofstream(text) << "kind,value,qty\nR,4k7,10\n";
  CHECK_THROWS_AS(Database::open(text), DatabaseError);
  const auto empty = tmp.file("empty.db");
  std::ofstream{empty};
  CHECK_THROWS_AS(Database::open(empty), DatabaseError);
  // An SQLite file of some other program: refused, and its journal mode is left alone.
  const auto foreign = tmp.file("other.db");
  {
    RawDb raw(foreign);
    REQUIRE(raw.exec("CREATE TABLE photos (id INTEGER)") == SQLITE_OK);
  }
  try {
    (void)Database::open(foreign);
    FAIL("opened a foreign file");
  } catch (const DatabaseError& e) {
    CHECK(std::string(e.what()).find("not a shelfstage database") != std::string::npos);
  }
  RawDb raw(foreign);
  CHECK(raw.text("PRAGMA journal_mode") == "delete");
  CHECK_THROWS_AS(Database::open(tmp.path()), InputError);  // a folder
}

TEST_CASE("a locked database gives DatabaseError after the busy timeout, and nothing changes") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  Database db = Database::create(path);
  const auto id = db.add_part(resistor(330, 8), "import");
  db.impl().conn.busy_timeout(200);  // the 5 s default, shortened for the test
  RawDb other(path);
  REQUIRE(other.exec("BEGIN IMMEDIATE") == SQLITE_OK);
  try {
    db.adjust(id, -1, "blocked");
    FAIL("wrote through a lock");
  } catch (const DatabaseError& e) {
    CHECK(e.code() == ExitCode::database);
    CHECK(std::string(e.what()).find("locked") != std::string::npos);
  }
  CHECK(db.part(id)->qty == 8);  // readers are not blocked in WAL mode
  REQUIRE(other.exec("ROLLBACK") == SQLITE_OK);
  db.adjust(id, -1, "free");
  CHECK(db.part(id)->qty == 7);
}

TEST_CASE("default_database_path: SHELFSTAGE_DB, then XDG_DATA_HOME, then HOME") {
  auto saved = [](const char* n) -> std::optional<std::string> {
    const char* v = std::getenv(n);
    return v ? std::optional<std::string>(v) : std::nullopt;
  };
  const auto db_env = saved("SHELFSTAGE_DB"), xdg = saved("XDG_DATA_HOME"), home = saved("HOME");
  ::setenv("SHELFSTAGE_DB", "/tmp/x/stock.db", 1);
  CHECK(store::default_database_path() == "/tmp/x/stock.db");
  ::unsetenv("SHELFSTAGE_DB");
  ::setenv("XDG_DATA_HOME", "/data", 1);
  CHECK(store::default_database_path() == "/data/shelfstage/stock.db");
  // XDG Base Directory Specification: a relative path is invalid and ignored.
  ::setenv("XDG_DATA_HOME", "relative", 1);
  ::setenv("HOME", "/home/me", 1);
  CHECK(store::default_database_path() == "/home/me/.local/share/shelfstage/stock.db");
  ::unsetenv("XDG_DATA_HOME");
  ::unsetenv("HOME");
  CHECK_THROWS_AS(store::default_database_path(), InputError);
  auto restore = [](const char* n, const std::optional<std::string>& v) {
    if (v)
      ::setenv(n, v->c_str(), 1);
    else
      ::unsetenv(n);
  };
  restore("SHELFSTAGE_DB", db_env);
  restore("XDG_DATA_HOME", xdg);
  restore("HOME", home);
}

// --- reliability: damage, read-only files, text at the door, imports, removing devices ------

namespace {

/// The message of the error of type E that f throws ("" when it throws none).
template <class E, class F>
std::string message_of(F&& f) {
  try {
    f();
  } catch (const E& e) {
    return e.what();
  }
  return "";
}

/// The message of the DatabaseError a write throws ("" when it does not throw).
template <class F>
std::string write_refusal(F&& write) {
  return message_of<DatabaseError>(write);
}

/// The VM steps every statement of the connection has run so far (SQLite's own counter,
/// sqlite3_stmt_status SQLITE_STMTSTATUS_VM_STEP): a count of work that does not depend on the
/// machine's speed.
long long vm_steps(Database& db) {
  long long n = 0;
  sqlite3* h = db.impl().conn.handle();
  for (sqlite3_stmt* st = sqlite3_next_stmt(h, nullptr); st != nullptr; st = sqlite3_next_stmt(h, st))
    n += sqlite3_stmt_status(st, SQLITE_STMTSTATUS_VM_STEP, 0);
  return n;
}

}  // namespace

TEST_CASE("a damaged schema opens read-only: reads work, each write names the damage and `check`") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  {
    Database db = Database::create(path);
    db.add_part(resistor(1000, 10), "import");
  }
  {
    RawDb raw(path);
    REQUIRE(raw.exec("DROP TRIGGER ledger_apply") == SQLITE_OK);
  }
  Database db = Database::open(path);
  REQUIRE(db.read_only_reason());
  CHECK(db.read_only_reason()->find("trigger ledger_apply is missing") != std::string::npos);
  CHECK(db.parts().size() == 1);  // reads still work
  const std::string refused = write_refusal([&] { db.add_part(resistor(1000, 5), "more"); });
  CHECK(refused.find("the database is damaged (trigger ledger_apply is missing)") != std::string::npos);
  CHECK(refused.find("`shelfstage check`") != std::string::npos);
  CHECK_FALSE(write_refusal([&] { db.adjust(db.parts()[0].id, -1, "x"); }).empty());
  CHECK(db.parts()[0].qty == 10);
  CHECK(db.ledger().size() == 1);
  const auto report = db.check();
  CHECK_FALSE(report.ok());
  CHECK(report.structure == std::vector<std::string>{"trigger ledger_apply is missing"});
}

TEST_CASE("schema damage: a foreign trigger, a trigger that says something else, a lost index, column or table") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  Database::create(path);
  auto damage_after = [&](const std::string& sql) {
    {
      RawDb raw(path);
      REQUIRE(raw.exec(sql) == SQLITE_OK);
    }
    return Database::open(path).check().structure;
  };
  CHECK(damage_after("CREATE TRIGGER sneaky AFTER INSERT ON ledger BEGIN UPDATE parts SET qty = 0; END") ==
        std::vector<std::string>{"trigger sneaky is not shelfstage's"});
  CHECK(damage_after("DROP TRIGGER sneaky; DROP TRIGGER ledger_no_delete; CREATE TRIGGER ledger_no_delete BEFORE "
                     "DELETE ON ledger BEGIN SELECT 1; END") ==
        std::vector<std::string>{"trigger ledger_no_delete is not as shelfstage made it"});
  CHECK(damage_after("DROP TRIGGER ledger_no_delete; CREATE TRIGGER ledger_no_delete BEFORE DELETE ON ledger\n"
                     "  BEGIN   SELECT RAISE(ABORT, 'the ledger is append-only');   END -- spelt otherwise\n")
            .empty());  // the same statement laid out otherwise is not damage
  CHECK(damage_after("DROP INDEX parts_line") == std::vector<std::string>{"index parts_line is missing"});
  CHECK(damage_after("CREATE INDEX parts_line ON parts(kind, bin COLLATE NOCASE, value); "
                     "ALTER TABLE pieces DROP COLUMN note") ==
        std::vector<std::string>{"table pieces has no column note"});
  // Without a table the other checks cannot run; check reports what it can and does not throw.
  const auto gone = damage_after("DROP TABLE build_lines");
  CHECK(std::find(gone.begin(), gone.end(), "table build_lines is missing") != gone.end());
  Database db = Database::open(path);
  CHECK(db.read_only_reason());
  CHECK_NOTHROW(db.parts());
}

TEST_CASE("text is checked at the door: bins, notes, names, labels and reasons must be clean UTF-8") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({njfet()});
  auto refusal = [](auto&& write) { return message_of<InputError>(write); };
  Part latin1 = resistor(4700, 3, "Fach \xE4");
  CHECK(refusal([&] { db.add_part(latin1, "import"); }) == "bin 'Fach \\xE4': byte 6 is not UTF-8 (0xE4)");
  Part nul = resistor(4700, 3);
  nul.note = std::string("a\0b", 3);
  CHECK(refusal([&] { db.add_part(nul, "import"); }).starts_with("note 'a\\x00b': byte 2 is a control character"));
  CHECK(refusal([&] {
          db.add_part(resistor(4700, 3), std::string("recount\x1B[2J"));
        }).starts_with("reason 'recount\\x1B[2J'"));
  CHECK(refusal([&] { db.put_devices({njfet("SJ-\xFF")}); }).starts_with("device name 'SJ-\\xFF'"));
  devices::MeasuredPiece piece;
  piece.label = "J\t4";
  piece.device = "SJ-101";
  piece.idss_a = 3e-3;
  piece.vp_v = -1.5;
  CHECK(refusal([&] { db.add_piece(piece); }).starts_with("label 'J\\x094'"));
  CHECK(db.parts().empty());
  CHECK(db.pieces().empty());
  // Clean text from every script is welcome.
  db.add_part(resistor(4700, 3, "Schublade Ä3 · 抽屉"), "Zählung");
  CHECK(db.parts()[0].bin == "Schublade Ä3 · 抽屉");
}

TEST_CASE("text a database already holds still lists: reads never refuse old text") {
  TempDir tmp;
  const auto path = tmp.file("s.db");
  Database db = Database::create(path);
  const auto id = db.add_part(resistor(4700, 3), "import");
  {
    RawDb raw(path);
    REQUIRE(raw.exec("UPDATE parts SET bin = CAST(X'4100E9' AS TEXT) WHERE id = " + std::to_string(id)) == SQLITE_OK);
  }
  const auto parts = db.parts();
  REQUIRE(parts.size() == 1);
  CHECK(parts[0].bin == std::string("A\0\xE9", 3));
  CHECK(db.check().ok());
}

TEST_CASE("import_parts names every row that cannot be added, with its line, and adds nothing") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({npn()});
  // Two rows of the largest count merge into one line: the second overflows it (line 3).
  const std::vector<Part> rows = {resistor(10e3, INT_MAX), resistor(10e3, INT_MAX), resistor(22e3, 5),
                                  transistor(PartKind::npn, "GONE-1", 2)};
  try {
    db.import_parts(rows, "import", "stock.csv", {2, 3, 4, 7});
    FAIL("the import went through");
  } catch (const store::CsvError& e) {
    CHECK(std::string(e.what()) == "stock.csv: 2 bad rows, nothing imported");
    REQUIRE(e.problems().size() == 2);
    CHECK(
        e.problems()[0].starts_with("stock.csv:3: R 10k 5% 0.25W bin A1: adding 2147483647 would make "
                                    "4294967294 pieces, more than one line can count (2147483647)"));
    CHECK(e.problems()[1].starts_with("stock.csv:7: device 'GONE-1' is not in the device list"));
  }
  CHECK(db.parts().empty());
  CHECK(db.ledger().empty());
  db.import_parts({resistor(10e3, INT_MAX), resistor(22e3, 5)}, "import", "stock.csv", {2, 3});
  CHECK(db.parts().size() == 2);
  check_invariant(db);
}

TEST_CASE("an import's work grows in proportion to its rows, however the rows share bins and values") {
  // Counted in SQLite's VM steps (not seconds): twice the rows must cost about twice the
  // steps. Before the index parts_line each row scanned every line of its kind (a quadratic
  // import: 50,000 rows took minutes).
  auto steps = [](int n, bool one_bin) {
    TempDir tmp;
    Database db = Database::create(tmp.file("s.db"));
    std::vector<Part> rows;
    for (int i = 0; i < n; ++i)
      rows.push_back(one_bin ? resistor(1000.0 + i, 1, "A1") : resistor(1000.0, 1, "B" + std::to_string(i)));
    const long long before = vm_steps(db);
    db.add_parts(rows, "import");
    return static_cast<double>(vm_steps(db) - before);
  };
  for (const bool one_bin : {true, false}) {
    CAPTURE(one_bin);
    const double small = steps(1000, one_bin);
    const double large = steps(4000, one_bin);
    CHECK(large / small < 4.4);  // linear: 4; quadratic: about 16
  }
}

TEST_CASE("remove_device: refused while named, unless cascade; the row stays for the history") {
  TempDir tmp;
  Database db = Database::create(tmp.file("s.db"));
  db.put_devices({njfet(), npn()});
  const auto line = db.add_part(transistor(PartKind::njfet, "SJ-101", 6), "import");
  const auto other = db.add_part(transistor(PartKind::npn, "SQ-410", 4), "import");
  devices::MeasuredPiece piece;
  piece.label = "J4";
  piece.device = "SJ-101";
  piece.idss_a = 3e-3;
  piece.vp_v = -1.5;
  db.add_piece(piece);
  auto& impl = db.impl();
  impl.immediate([&] {
    for (const char* id : {"s1", "s2"})
      impl.conn.prepare("INSERT INTO designs (id, created, spec_json, candidate_json) VALUES (?, 'now', '{}', '{}')")
          .bind(1, id)
          .run();
    impl.reserve(std::string("s1"), line, 2);
    impl.reserve(std::nullopt, line, 1);
    impl.conn.prepare("INSERT INTO builds (design_id, copies, state, created) VALUES ('s2', 1, 'built', 'now')").run();
  });
  const auto users = db.device_users("sj-101");
  CHECK(users.lines.size() == 1);
  CHECK(users.pieces == std::vector<std::string>{"J4"});
  CHECK_THROWS_AS(db.remove_device("SJ-101", {}, false, "gone"), InputError);
  CHECK_THROWS_AS(db.remove_device("SQ-410", {"s1"}, false, "gone"), InputError);  // a design uses it
  CHECK(db.device_records().size() == 2);

  const auto r = db.remove_device("sj-101", {"s1", "s2"}, true, "type discontinued");
  CHECK(r.name == "SJ-101");
  REQUIRE(r.lines.size() == 1);
  CHECK(r.lines[0].qty == 6);
  CHECK(r.pieces == std::vector<std::string>{"J4"});
  CHECK(r.designs == std::vector<std::string>{"s1"});
  CHECK(r.designs_built == std::vector<std::string>{"s2"});  // a build records it: kept
  CHECK_FALSE(db.device("SJ-101"));
  CHECK(db.device_records().size() == 1);
  CHECK(db.pieces().empty());
  CHECK(db.parts().size() == 1);  // the line is off the shelf...
  CHECK(db.part(line)->removed);
  CHECK(db.part(line)->qty == 0);
  CHECK(db.part(line)->reserved == 0);
  CHECK(db.ledger().back().reason == "type discontinued");  // ...through the ledger
  CHECK(db.ledger().back().delta == -6);
  CHECK(db.part(other)->qty == 4);
  check_invariant(db);
  // A stock line naming it again is refused; the type added again comes back.
  CHECK_THROWS_AS(db.add_part(transistor(PartKind::njfet, "SJ-101", 1), "later"), InputError);
  db.put_devices({njfet()});
  REQUIRE(db.device("SJ-101"));
  db.add_part(transistor(PartKind::njfet, "SJ-101", 1), "later");
  check_invariant(db);
}

TEST_CASE("a database on a read-only file system opens for reading; writes and creation say why not") {
  // A tmpfs remounted read-only in a mount namespace of a child process (Linux
  // mount_namespaces(7)); needs the privilege to mount, which root has (as in CI).
  TempDir tmp;
  std::filesystem::create_directories(tmp.file("ro"));
  const pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    const auto dir = tmp.file("ro");
    if (::unshare(CLONE_NEWNS) != 0 || ::mount(nullptr, "/", nullptr, MS_REC | MS_PRIVATE, nullptr) != 0 ||
        ::mount("tmpfs", dir.c_str(), "tmpfs", 0, "size=8m") != 0)
      ::_exit(77);
    int code = 0;
    try {
      {
        Database db = Database::create(dir / "s.db");
        db.add_part(resistor(4700, 3), "import");
      }
      if (::mount(nullptr, dir.c_str(), nullptr, MS_REMOUNT | MS_RDONLY, nullptr) != 0) ::_exit(77);
      Database db = Database::open(dir / "s.db");
      if (db.parts().size() != 1 || db.parts()[0].qty != 3) code = 1;
      const std::string refused = write_refusal([&] { db.add_part(resistor(4700, 1), "more"); });
      if (refused.find("s.db: cannot change the stock: it is on a read-only file system") == std::string::npos)
        code = 2;
      try {
        Database::create(dir / "t.db");
        code = 3;
      } catch (const InputError& e) {
        if (std::string(e.what()).find("read-only file system") == std::string::npos) code = 4;
      }
    } catch (...) {
      code = 5;
    }
    ::_exit(code);
  }
  int status = 0;
  REQUIRE(::waitpid(child, &status, 0) == child);
  REQUIRE(WIFEXITED(status));
  if (WEXITSTATUS(status) == 77) {
    MESSAGE("no mount namespace here (not root?): the read-only file system case is not exercised");
    return;
  }
  CHECK(WEXITSTATUS(status) == 0);
}
