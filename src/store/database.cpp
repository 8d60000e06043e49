// The stock database: opening, migrating, and every stock change as one ledgered transaction.
//
// NOTES (numbered invariants; check() verifies each):
//  1. parts.qty == sum(ledger.delta) for every line (schema trigger ledger_apply).
//  2. 0 <= parts.reserved <= parts.qty; parts.reserved == sum(reservations.qty).
//  3. A removed line has qty 0 and no reservations; it stays for the ledger's sake.
//  4. A transistor line on the shelf names an existing device of its own kind.
//  5. No line on the shelf and no measured piece names a removed device (remove_device).
//  6. Every text stored (bins, notes, names, reasons) is clean text (units/text.hpp NOTES 1),
//     checked here whatever the caller checked before.
//  7. The schema holds exactly the tables, indexes and triggers the migrations make (no
//     trigger besides); a file that does not is opened read-only (schema_damage).
// Every connection: busy timeout 5 s, foreign_keys ON, journal_mode WAL, synchronous FULL.
// Every read-modify-write: one BEGIN IMMEDIATE transaction (Impl::immediate).
//
// Opening a file:   missing, a folder, a device --> InputError   not SQLite / not ours --> DatabaseError
//                   user_version > kSchemaVersion --> DatabaseError (newer program needed)
//                   schema damaged (NOTES 7), read-only file system, no write permission
//                       --> open read-only: reads work, every write is a DatabaseError saying why
//                   user_version < kSchemaVersion --> migrate forward in one transaction
#include "shelfstage/store/database.hpp"

#include <fmt/format.h>
#include <sys/stat.h>
#include <sys/statvfs.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <climits>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <mutex>

#include "schema.hpp"
#include "shelfstage/error.hpp"
#include "shelfstage/store/csv.hpp"
#include "shelfstage/store/detail/sqlite.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::store {
namespace {

using detail::Connection;
using detail::Statement;

constexpr int kBusyTimeoutMs = 5000;
constexpr double kSameValue = 1e-9;  ///< relative difference under which two values are one

struct Migration {
  int version;
  std::string_view sql;
};
constexpr std::array<Migration, 5> kMigrations{{{1, detail::kSchemaV1},
                                                {2, detail::kSchemaV2},
                                                {3, detail::kSchemaV3},
                                                {4, detail::kSchemaV4},
                                                {5, detail::kSchemaV5}}};
static_assert(kMigrations.back().version == kSchemaVersion, "one migration per schema version");

constexpr const char* kPartColumns =
    "id, kind, value, device, tol_minus, tol_plus, power_w, volts, dielectric, package, qty, reserved, bin, "
    "note, removed";

using Family = DeviceColumn::Family;

/// A figure's column in the devices table: its name in a device file (store::device_columns),
/// but for `is` and `in`, SQL keywords, which are is_a and in_a.
std::string_view sql_column(const DeviceColumn& c) {
  if (c.name == "is") return "is_a";
  if (c.name == "in") return "in_a";
  return c.name;
}

/// Whether a column of this family holds a figure of a record of this kind: its own family's
/// and the ratings (the other families' columns are NULL).
bool holds(Family family, devices::DeviceKind kind) {
  return family == Family::rating || family == device_family(kind);
}

/// The devices table's columns after name and kind, in the order SELECT and INSERT list them:
/// the JFET and BJT figures, the note (nullptr), the ratings, the op-amp figures.
const std::vector<const DeviceColumn*>& device_table_columns() {
  static const std::vector<const DeviceColumn*> order = [] {
    std::vector<const DeviceColumn*> out;
    for (Family f : {Family::jfet, Family::bjt, Family::rating, Family::opamp}) {
      if (f == Family::rating) out.push_back(nullptr);
      for (const DeviceColumn& c : device_columns())
        if (c.family == f) out.push_back(&c);
    }
    return out;
  }();
  return order;
}

/// "name, kind, idss_min, ..., note, v_max, ...": the devices table's columns.
const std::string& device_column_list() {
  static const std::string list = [] {
    std::string out = "name, kind";
    for (const DeviceColumn* c : device_table_columns()) out += fmt::format(", {}", c ? sql_column(*c) : "note");
    return out;
  }();
  return list;
}

constexpr const char* kPieceColumns = "label, device, idss, vp, hfe, uncertainty, note";

std::string trimmed(std::string_view s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.front()))) s.remove_prefix(1);
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.remove_suffix(1);
  return std::string(s);
}

std::string join(const std::vector<std::string>& items, std::string_view sep) {
  std::string out;
  for (const auto& s : items) {
    if (!out.empty()) out += sep;
    out += s;
  }
  return out;
}

/// The first `most` items joined, then "and N more".
std::string some_of(const std::vector<std::string>& items, std::size_t most = 3) {
  if (items.size() <= most) return join(items, ", ");
  return join(std::vector<std::string>(items.begin(), items.begin() + static_cast<std::ptrdiff_t>(most)), ", ") +
         fmt::format(" and {} more", items.size() - most);
}

Part read_part(const Statement& st) {
  Part p;
  p.id = st.int64(0);
  const std::string kind = st.text(1);
  if (!parse_kind_code(kind, p.kind)) throw DatabaseError(fmt::format("stock line {}: unknown kind '{}'", p.id, kind));
  p.value = st.real(2);
  p.device = st.opt_text(3).value_or("");
  const auto minus = st.opt_real(4);
  const auto plus = st.opt_real(5);
  if (minus && plus) p.tol = units::Tolerance{*minus, *plus};
  p.power_w = st.opt_real(6);
  p.volts = st.opt_real(7);
  p.dielectric = st.text(8);
  p.package = st.text(9);
  p.qty = st.int32(10);
  p.reserved = st.int32(11);
  p.bin = st.text(12);
  p.note = st.text(13);
  p.removed = st.int64(14) != 0;
  return p;
}

devices::DeviceRecord read_device(const Statement& st) {
  devices::DeviceRecord d;
  d.name = st.text(0);
  const std::string kind = st.text(1);
  if (!devices::parse_kind(kind, d.kind))
    throw DatabaseError(fmt::format("device '{}': unknown kind '{}'", d.name, kind));
  // The other families' figures are NULL; an optional figure left NULL keeps the record's default.
  int col = 2;
  for (const DeviceColumn* c : device_table_columns()) {
    if (c == nullptr)
      d.note = st.text(col);
    else if (holds(c->family, d.kind))
      if (const auto v = st.opt_real(col)) c->set(d, *v);
    ++col;
  }
  return d;
}

devices::MeasuredPiece read_piece(const Statement& st) {
  devices::MeasuredPiece m;
  m.label = st.text(0);
  m.device = st.text(1);
  m.idss_a = st.opt_real(2);
  m.vp_v = st.opt_real(3);
  m.hfe = st.opt_real(4);
  m.uncertainty = st.real(5);
  m.note = st.text(6);
  return m;
}

/// A device on the list (not a removed one) by name, without regard to case.
std::optional<devices::DeviceRecord> find_device(const Connection& conn, std::string_view name) {
  auto st = conn.cached(fmt::format("SELECT {} FROM devices WHERE name = ? AND removed = 0", device_column_list()));
  st->bind(1, name);
  if (!st->step()) return std::nullopt;
  return read_device(*st);
}

// --- schema verification (NOTES 7) -------------------------------------------------------

struct SchemaObject {
  std::string type, name;
  std::string body;  ///< a table's column names ("id,kind,..."); an index's or trigger's SQL, normalised
};

bool word_char(char c) { return std::isalnum(static_cast<unsigned char>(c)) || c == '_'; }

/// SQL text without comments and with white space only where it parts two words, so that
/// two spellings of one statement compare equal.
std::string normalised_sql(std::string_view sql) {
  std::string out;
  bool space = false, quoted = false;
  for (std::size_t i = 0; i < sql.size(); ++i) {
    const char c = sql[i];
    if (quoted) {
      out += c;
      quoted = c != '\'';
    } else if (c == '-' && i + 1 < sql.size() && sql[i + 1] == '-') {
      while (i < sql.size() && sql[i] != '\n') ++i;
      space = true;
    } else if (std::isspace(static_cast<unsigned char>(c))) {
      space = true;
    } else {
      if (space && !out.empty() && word_char(out.back()) && word_char(c)) out += ' ';
      space = false;
      quoted = c == '\'';
      out += c;
    }
  }
  return out;
}

std::vector<SchemaObject> schema_objects(const Connection& conn) {
  std::vector<SchemaObject> out;
  auto st = conn.prepare(
      "SELECT type, name, coalesce(sql, '') FROM sqlite_schema WHERE name NOT LIKE 'sqlite\\_%' ESCAPE '\\' "
      "ORDER BY type, name");
  while (st.step()) out.push_back({st.text(0), st.text(1), normalised_sql(st.text(2))});
  for (auto& o : out) {
    if (o.type != "table") continue;
    o.body.clear();
    auto cols = conn.prepare("SELECT name FROM pragma_table_info(?) ORDER BY cid");
    cols.bind(1, o.name);
    while (cols.step()) o.body += cols.text(0) + ",";
  }
  return out;
}

/// The objects migrations 1 ... version make, read from a scratch database in memory (once
/// per version and process).
const std::vector<SchemaObject>& reference_schema(int version) {
  static std::mutex guard;
  static std::map<int, std::vector<SchemaObject>> made;
  const std::lock_guard<std::mutex> lock(guard);
  if (const auto it = made.find(version); it != made.end()) return it->second;
  const Connection scratch(":memory:", SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
  for (const auto& m : kMigrations)
    if (m.version <= version) scratch.exec(std::string(m.sql));
  return made[version] = schema_objects(scratch);
}

/// What is wrong with a file's schema of the given version, one line per object: a table,
/// index or trigger missing, a table without one of its columns, an index or trigger that
/// says something else, a trigger that is not shelfstage's. Empty when the schema is whole.
std::vector<std::string> schema_damage(const Connection& conn, int version) {
  const auto& want = reference_schema(version);
  const auto have = schema_objects(conn);
  auto find = [](const std::vector<SchemaObject>& list, const SchemaObject& o) {
    return std::find_if(list.begin(), list.end(),
                        [&](const SchemaObject& x) { return x.type == o.type && x.name == o.name; });
  };
  std::vector<std::string> out;
  for (const auto& w : want) {
    const auto h = find(have, w);
    if (h == have.end()) {
      out.push_back(fmt::format("{} {} is missing", w.type, w.name));
    } else if (w.type == "table") {
      // Columns by name: extra ones do no harm, a missing one breaks every query that needs it.
      std::size_t from = 0;
      for (std::size_t comma; (comma = w.body.find(',', from)) != std::string::npos; from = comma + 1) {
        const std::string column = w.body.substr(from, comma - from);
        if (("," + h->body).find("," + column + ",") == std::string::npos)
          out.push_back(fmt::format("table {} has no column {}", w.name, column));
      }
    } else if (h->body != w.body) {
      out.push_back(fmt::format("{} {} is not as shelfstage made it", w.type, w.name));
    }
  }
  for (const auto& h : have)
    if (h.type == "trigger" && find(want, h) == want.end())
      out.push_back(fmt::format("trigger {} is not shelfstage's", units::clip(h.name)));
  return out;
}

/// True when the file lies on a file system mounted read-only.
bool on_read_only_file_system(const std::filesystem::path& path) {
  struct statvfs fs {};
  return ::statvfs(path.c_str(), &fs) == 0 && (fs.f_flag & ST_RDONLY) != 0;
}

/// Reads the 16-byte header: refuses files that are not SQLite before SQLite touches them.
void check_header(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw DatabaseError(fmt::format("{}: cannot read the file", path.string()));
  char magic[16] = {};
  in.read(magic, sizeof magic);
  const auto got = in.gcount();
  if (got == 0)
    throw DatabaseError(
        fmt::format("{}: empty file, not a shelfstage database (remove it and run `shelfstage init`)", path.string()));
  if (got < 16 || std::string_view(magic, 16) != std::string_view("SQLite format 3\0", 16))
    throw DatabaseError(fmt::format("{}: not a shelfstage database (not an SQLite file)", path.string()));
}

void base_settings(const Connection& conn) {
  conn.busy_timeout(kBusyTimeoutMs);
  conn.exec("PRAGMA foreign_keys = ON");
  if (conn.prepare("PRAGMA foreign_keys").scalar<int>() != 1)
    throw DatabaseError(fmt::format("{}: this SQLite cannot enforce foreign keys", conn.label()));
}

void journal_settings(const Connection& conn) {
  std::string mode = conn.prepare("PRAGMA journal_mode = WAL").scalar<std::string>();
  for (char& c : mode) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (mode != "wal")
    throw DatabaseError(
        fmt::format("{}: cannot use write-ahead logging (journal mode stays '{}')", conn.label(), mode));
  conn.exec("PRAGMA synchronous = FULL");
}

[[noreturn]] void throw_newer(const Connection& conn, int version) {
  throw DatabaseError(fmt::format("{}: schema version {} is newer than this shelfstage ({}); upgrade shelfstage",
                                  conn.label(), version, kSchemaVersion));
}

/// The migrations from the file's version on, in one BEGIN IMMEDIATE transaction.
void migrate_locked(Database::Impl& impl, bool fresh) {
  const Connection& conn = impl.conn;
  impl.immediate([&] {
    // Read again under the write lock: another program may have migrated meanwhile.
    const int from = conn.prepare("PRAGMA user_version").scalar<int>();
    if (from > kSchemaVersion) throw_newer(conn, from);
    if (fresh) {
      if (conn.prepare("SELECT count(*) FROM sqlite_schema").scalar<int>() != 0)
        throw InputError(fmt::format("{} already exists; refusing to overwrite it", conn.label()));
      conn.exec(fmt::format("PRAGMA application_id = {}", detail::kApplicationId));
    }
    for (const auto& m : kMigrations)
      if (m.version > from) conn.exec(std::string(m.sql));
    conn.exec(fmt::format("PRAGMA user_version = {}", kSchemaVersion));
    auto fk = conn.prepare("PRAGMA foreign_key_check");
    if (fk.step())
      throw DatabaseError(fmt::format("{}: migration from version {} broke a foreign key in table {}; nothing changed",
                                      conn.label(), from, fk.text(0)));
  });
}

/// Foreign keys off for the life of the guard (a migration that rebuilds a table: kSchemaV5),
/// on again after it, with legacy_alter_table off as it was before the migration set it;
/// SQLite ignores foreign_keys inside a transaction, so the guard goes around it.
class RebuildSettings {
 public:
  explicit RebuildSettings(const Connection& conn) : conn_(conn) { conn_.exec("PRAGMA foreign_keys = OFF"); }
  RebuildSettings(const RebuildSettings&) = delete;
  RebuildSettings& operator=(const RebuildSettings&) = delete;
  ~RebuildSettings() {
    try {
      conn_.exec("PRAGMA legacy_alter_table = OFF");
      conn_.exec("PRAGMA foreign_keys = ON");
    } catch (...) {
      // migrate() checks that foreign keys are on before the connection is used.
    }
  }

 private:
  const Connection& conn_;
};

/// Brings the schema from its current version to kSchemaVersion in one transaction.
void migrate(Database::Impl& impl, bool fresh) {
  const Connection& conn = impl.conn;
  {
    const RebuildSettings rebuilding(conn);
    migrate_locked(impl, fresh);
  }
  // Every later statement relies on foreign keys again.
  if (conn.prepare("PRAGMA foreign_keys").scalar<int>() != 1)
    throw DatabaseError(fmt::format("{}: foreign keys did not come back on after the migration", conn.label()));
  impl.version = kSchemaVersion;
}

/// "YYYY-MM-DD" with an optional "THH[:MM[:SS]]" (or a space for T) and an optional Z.
std::string normalise_since(std::string_view text) {
  std::string s = trimmed(text);
  auto bad = [&]() -> InputError {
    return InputError(
        fmt::format("since '{}' is not a UTC date or date-time like 2026-12-01 or 2026-12-01T21:53", text));
  };
  if (!s.empty() && (s.back() == 'Z' || s.back() == 'z')) s.pop_back();
  if (s.size() > 10 && s[10] == ' ') s[10] = 'T';
  static constexpr std::string_view kPattern = "dddd-dd-ddTdd:dd:dd";
  if (s.size() < 10 || s.size() > kPattern.size()) throw bad();
  for (std::size_t i = 0; i < s.size(); ++i) {
    const char want = kPattern[i];
    if (want == 'd' ? !std::isdigit(static_cast<unsigned char>(s[i])) : s[i] != want) throw bad();
  }
  if (s.size() != 10 && s.size() != 13 && s.size() != 16 && s.size() != 19) throw bad();
  const int month = std::stoi(s.substr(5, 2));
  const int day = std::stoi(s.substr(8, 2));
  if (month < 1 || month > 12 || day < 1 || day > 31) throw bad();
  // ISO 8601 times of day: hours 00-23, minutes 00-59, seconds 00-60 (a leap second).
  if (s.size() >= 13 && std::stoi(s.substr(11, 2)) > 23) throw bad();
  if (s.size() >= 16 && std::stoi(s.substr(14, 2)) > 59) throw bad();
  if (s.size() >= 19 && std::stoi(s.substr(17, 2)) > 60) throw bad();
  return s;
}

}  // namespace

// --- Impl helpers ----------------------------------------------------------------------

std::optional<Part> Database::Impl::load_part(std::int64_t id) const {
  auto st = conn.cached(fmt::format("SELECT {} FROM parts WHERE id = ?", kPartColumns));
  st->bind(1, id);
  if (!st->step()) return std::nullopt;
  return read_part(*st);
}

std::int64_t Database::Impl::record_change(std::int64_t part_id, int delta, std::string_view reason,
                                           std::optional<std::int64_t> build_id) {
  if (delta == 0) return 0;
  units::check_text("reason", reason);
  const auto p = load_part(part_id);
  if (!p) throw InputError(fmt::format("no stock line {}", part_id));
  const std::int64_t after = std::int64_t{p->qty} + delta;
  if (after < 0)
    throw InfeasibleError(fmt::format("not enough stock: {} has {} on hand, {} needed", describe(*p), p->qty, -delta));
  if (after < p->reserved)
    throw InfeasibleError(fmt::format("not enough stock: {} has {} on hand and {} reserved, {} needed", describe(*p),
                                      p->qty, p->reserved, -delta));
  if (after > INT_MAX)
    throw InputError(fmt::format("{}: adding {} would make {} pieces, more than one line can count ({})", describe(*p),
                                 delta, after, INT_MAX));
  conn.cached("INSERT INTO ledger (at, part_id, part_desc, delta, reason, build_id) VALUES (?, ?, ?, ?, ?, ?)")
      ->bind_all(detail::utc_now(), part_id, describe(*p), delta, reason, build_id)
      .run();
  const std::int64_t ledger_id = conn.last_insert_rowid();
  // Pieces coming back to a removed line put it on the shelf again (NOTES 3).
  if (p->removed && after > 0) conn.prepare("UPDATE parts SET removed = 0 WHERE id = ?").bind(1, part_id).run();
  return ledger_id;
}

std::int64_t Database::Impl::reserve(std::optional<std::string> design_id, std::int64_t part_id, int qty) {
  const auto p = load_part(part_id);
  if (!p) throw InputError(fmt::format("no stock line {}", part_id));
  if (qty <= 0) throw InputError(fmt::format("reserve qty {} must be above zero", qty));
  if (p->removed) throw InputError(fmt::format("stock line {} ({}) was removed", part_id, describe(*p)));
  if (qty > p->available())
    throw InfeasibleError(fmt::format("not enough stock: {} has {} available ({} on hand, {} reserved), {} needed",
                                      describe(*p), p->available(), p->qty, p->reserved, qty));
  conn.prepare("INSERT INTO reservations (design_id, part_id, qty, created) VALUES (?, ?, ?, ?)")
      .bind_all(design_id, part_id, qty, detail::utc_now())
      .run();
  return conn.last_insert_rowid();
}

// --- opening ---------------------------------------------------------------------------

Database::Database(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
Database::Database(Database&&) noexcept = default;
Database& Database::operator=(Database&&) noexcept = default;
Database::~Database() = default;

Database Database::create(const std::filesystem::path& path) {
  std::error_code ec;
  if (std::filesystem::exists(path, ec))
    throw InputError(fmt::format("{} already exists; refusing to overwrite it", path.string()));
  if (path.has_parent_path()) {
    std::filesystem::create_directories(path.parent_path(), ec);
    if (ec) throw InputError(fmt::format("cannot create folder {}: {}", path.parent_path().string(), ec.message()));
  }
  if (const auto why = detail::write_obstacle(path); !why.empty())
    throw InputError(fmt::format("cannot create {}: {}", path.string(), why));
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  bool remove_on_failure = true;
  try {
    impl->conn = Connection(path, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE);
    base_settings(impl->conn);
    journal_settings(impl->conn);
    migrate(*impl, true);
  } catch (const InputError&) {
    remove_on_failure = false;  // someone else's database appeared meanwhile: leave it be
    throw;
  } catch (...) {
    if (remove_on_failure) {
      impl->conn = Connection();
      for (const char* suffix : {"", "-wal", "-shm", "-journal"}) std::filesystem::remove(path.string() + suffix, ec);
    }
    throw;
  }
  return Database(std::move(impl));
}

Database Database::open(const std::filesystem::path& path) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec))
    throw InputError(fmt::format("{}: no stock database here; create one with `shelfstage init`", path.string()));
  if (std::filesystem::is_directory(path, ec))
    throw InputError(fmt::format("{} is a folder, not a stock database", path.string()));
  if (struct stat st{}; ::stat(path.c_str(), &st) == 0 && !S_ISREG(st.st_mode))
    throw InputError(
        fmt::format("{} is not a regular file (a device, fifo or socket), not a stock database", path.string()));
  check_header(path);
  auto impl = std::make_unique<Impl>();
  impl->path = path;
  // A file that cannot be written is opened read-only, so that it can at least be read.
  const std::string obstacle = detail::write_obstacle(path);
  const bool frozen = !obstacle.empty() && on_read_only_file_system(path);
  if (frozen) {
    // Nobody can write there, so the file is read without locks or journal files, unless a
    // write-ahead log left behind holds changes that are not in the file yet.
    if (std::filesystem::file_size(path.string() + "-wal", ec) > 0 && !ec)
      throw DatabaseError(fmt::format(
          "{}: on a read-only file system, with changes not yet merged from {}-wal; copy both files to a writable "
          "folder and open the copy",
          path.string(), path.string()));
  }
  impl->conn = Connection(path, obstacle.empty() ? SQLITE_OPEN_READWRITE : SQLITE_OPEN_READONLY, frozen);
  const Connection& conn = impl->conn;
  base_settings(conn);
  // Identify the file before changing anything in it (the journal mode is persistent).
  const auto app_id = conn.prepare("PRAGMA application_id").scalar<std::int64_t>();
  const int version = conn.prepare("PRAGMA user_version").scalar<int>();
  if (app_id != detail::kApplicationId)
    throw DatabaseError(
        fmt::format("{}: not a shelfstage database (an SQLite file of another program)", path.string()));
  if (version > kSchemaVersion) throw_newer(conn, version);
  if (version < 1)
    throw DatabaseError(fmt::format("{}: schema version {} is not a shelfstage schema", path.string(), version));
  impl->version = version;
  if (const auto damage = schema_damage(conn, version); !damage.empty()) {
    const std::string what = fmt::format("{}: the database is damaged ({})", path.string(), some_of(damage));
    if (version < kSchemaVersion)
      throw DatabaseError(what + fmt::format(" and, being of schema version {}, cannot be read by this shelfstage; "
                                             "run `shelfstage check` and restore a backup",
                                             version));
    impl->read_only = what +
                      "; nothing was written. Reads still work: run `shelfstage check` for the whole "
                      "report, then restore a backup (`stock export` makes one)";
  } else if (!obstacle.empty()) {
    if (version < kSchemaVersion)
      throw DatabaseError(
          fmt::format("{}: schema version {} must be brought up to {} before use, which needs "
                      "writing, but {}",
                      path.string(), version, kSchemaVersion, obstacle));
    impl->read_only = fmt::format("{}: cannot change the stock: {}; nothing was written", path.string(), obstacle);
  } else {
    journal_settings(conn);
    if (version < kSchemaVersion) migrate(*impl, false);
  }
  return Database(std::move(impl));
}

int Database::schema_version() const { return impl_->version; }
const std::filesystem::path& Database::path() const { return impl_->path; }

std::optional<std::string> Database::read_only_reason() const {
  if (impl_->read_only.empty()) return std::nullopt;
  return impl_->read_only;
}

void Database::on_commit(std::function<void()> observer) { impl_->on_commit = std::move(observer); }

// --- parts -----------------------------------------------------------------------------

std::vector<Part> Database::parts() const {
  std::vector<Part> out;
  auto st = impl_->conn.prepare(fmt::format("SELECT {} FROM parts WHERE removed = 0", kPartColumns));
  while (st.step()) out.push_back(read_part(st));
  auto lower = [](std::string s) {
    for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    return s;
  };
  std::sort(out.begin(), out.end(), [&](const Part& a, const Part& b) {
    if (a.kind != b.kind) return a.kind < b.kind;
    if (a.value != b.value) return a.value < b.value;
    if (a.device != b.device) return lower(a.device) < lower(b.device);
    if (a.bin != b.bin) return a.bin < b.bin;
    return a.id < b.id;
  });
  return out;
}

std::optional<Part> Database::part(std::int64_t id) const { return impl_->load_part(id); }

namespace {

std::int64_t add_part_locked(Database::Impl& impl, const Part& in, std::string_view reason) {
  Part p = in;
  p.device = trimmed(p.device);
  p.bin = trimmed(p.bin);
  p.dielectric = trimmed(p.dielectric);
  p.package = trimmed(p.package);
  p.note = trimmed(p.note);
  for (const auto& [field, text] : {std::pair<const char*, const std::string&>{"device", p.device},
                                    {"bin", p.bin},
                                    {"dielectric", p.dielectric},
                                    {"package", p.package},
                                    {"note", p.note}})
    units::check_text(field, text);
  const auto problems = part_problems(p);
  if (!problems.empty()) throw InputError(fmt::format("{}: {}", describe(p), join(problems, "; ")));
  if (!is_passive(p.kind)) {
    const auto dev = find_device(impl.conn, p.device);
    if (!dev)
      throw InputError(
          fmt::format("device '{}' is not in the device list; import it first (devices import)", p.device));
    if (part_kind(dev->kind) != p.kind)
      throw InputError(fmt::format("kind {} does not match device '{}' ({})", kind_code(p.kind), dev->name,
                                   devices::kind_name(dev->kind)));
    p.device = dev->name;  // the spelling of the device list
  }
  const std::optional<std::string> device = is_passive(p.kind) ? std::nullopt : std::optional(p.device);
  const std::optional<double> minus = p.tol ? std::optional(p.tol->minus) : std::nullopt;
  const std::optional<double> plus = p.tol ? std::optional(p.tol->plus) : std::nullopt;
  const std::string kind(kind_code(p.kind));

  // An identical line (live ones first, then a removed one to revive) takes the pieces. The
  // index parts_line finds the lines of one kind and bin near the value in one seek, so an
  // import stays linear in its rows.
  const double margin = kSameValue * std::abs(p.value);
  std::int64_t id = 0;
  std::int64_t removed = 0;
  std::string old_note;
  bool found = false;
  {
    auto find = impl.conn.cached(
        "SELECT id, removed, note FROM parts WHERE kind = ? AND bin = ? COLLATE NOCASE AND value BETWEEN ? AND ? "
        "AND device IS ? AND tol_minus IS ? AND tol_plus IS ? AND power_w IS ? AND volts IS ? "
        "AND dielectric = ? COLLATE NOCASE AND package = ? COLLATE NOCASE ORDER BY removed, id LIMIT 1");
    find->bind_all(kind, p.bin, p.value - margin, p.value + margin, device, minus, plus, p.power_w, p.volts,
                   p.dielectric, p.package);
    if (find->step()) {
      found = true;
      id = find->int64(0);
      removed = find->int64(1);
      old_note = find->text(2);
    }
  }
  if (found) {
    if (removed != 0) impl.conn.cached("UPDATE parts SET removed = 0 WHERE id = ?")->bind(1, id).run();
    if (old_note.empty() && !p.note.empty())
      impl.conn.cached("UPDATE parts SET note = ? WHERE id = ?")->bind_all(p.note, id).run();
  } else {
    impl.conn
        .cached(
            "INSERT INTO parts (kind, value, device, tol_minus, tol_plus, power_w, volts, dielectric, package, bin, "
            "note) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)")
        ->bind_all(kind, p.value, device, minus, plus, p.power_w, p.volts, p.dielectric, p.package, p.bin, p.note)
        .run();
    id = impl.conn.last_insert_rowid();
  }
  impl.record_change(id, p.qty, reason);
  if (p.reserved > 0) impl.reserve(std::nullopt, id, p.reserved);
  return id;
}

}  // namespace

std::int64_t Database::add_part(const Part& part, std::string_view reason) {
  return impl_->immediate([&] { return add_part_locked(*impl_, part, reason); });
}

void Database::add_parts(const std::vector<Part>& parts, std::string_view reason) {
  impl_->immediate([&] {
    for (const auto& p : parts) add_part_locked(*impl_, p, reason);
  });
}

void Database::import_parts(const std::vector<Part>& parts, std::string_view reason, std::string_view source,
                            const std::vector<std::size_t>& lines) {
  impl_->immediate([&] {
    // A row that fails is noted and the rest still run, to name every bad row; nothing is
    // committed then. (A savepoint per row would cost a sub-journal copy of every page a row
    // touches: several times the whole import. A failing row can leave at most its line
    // revived, which the rollback undoes with the rest.)
    std::vector<std::string> problems;
    for (std::size_t i = 0; i < parts.size(); ++i) {
      try {
        add_part_locked(*impl_, parts[i], reason);
      } catch (const InputError& e) {
        problems.push_back(fmt::format("{}:{}: {}", source, i < lines.size() ? lines[i] : i + 1, e.what()));
      } catch (const InfeasibleError& e) {
        problems.push_back(fmt::format("{}:{}: {}", source, i < lines.size() ? lines[i] : i + 1, e.what()));
      }
    }
    if (!problems.empty()) throw_bad_rows(source, problems, problems.size());
  });
}

void Database::adjust(std::int64_t part_id, int delta, std::string_view reason) {
  impl_->immediate([&] {
    const auto p = impl_->load_part(part_id);
    if (!p) throw InputError(fmt::format("no stock line {}", part_id));
    if (p->removed) throw InputError(fmt::format("stock line {} ({}) was removed", part_id, describe(*p)));
    const std::int64_t after = std::int64_t{p->qty} + delta;
    if (after < 0)
      throw InputError(
          fmt::format("adjust {:+}: {} has {} on hand; the count cannot go below zero", delta, describe(*p), p->qty));
    if (after < p->reserved)
      throw InputError(fmt::format("adjust {:+}: {} has {} on hand and {} reserved; release the reservation first",
                                   delta, describe(*p), p->qty, p->reserved));
    impl_->record_change(part_id, delta, reason);
  });
}

void Database::remove_part(std::int64_t part_id, std::string_view reason) {
  impl_->immediate([&] {
    const auto p = impl_->load_part(part_id);
    if (!p) throw InputError(fmt::format("no stock line {}", part_id));
    if (p->removed) throw InputError(fmt::format("stock line {} ({}) is already removed", part_id, describe(*p)));
    if (p->reserved > 0)
      throw InputError(fmt::format("stock line {} ({}) has {} pieces reserved; release them first", part_id,
                                   describe(*p), p->reserved));
    impl_->record_change(part_id, -p->qty, reason);
    impl_->conn.prepare("UPDATE parts SET removed = 1 WHERE id = ?").bind(1, part_id).run();
  });
}

// --- devices and pieces ----------------------------------------------------------------

std::vector<devices::DeviceRecord> Database::device_records() const {
  std::vector<devices::DeviceRecord> out;
  auto st =
      impl_->conn.prepare(fmt::format("SELECT {} FROM devices WHERE removed = 0 ORDER BY name", device_column_list()));
  while (st.step()) out.push_back(read_device(st));
  return out;
}

std::optional<devices::DeviceRecord> Database::device(std::string_view name) const {
  return find_device(impl_->conn, trimmed(name));
}

void Database::put_devices(const std::vector<devices::DeviceRecord>& records) {
  impl_->immediate([&] {
    const auto& conn = impl_->conn;
    for (auto d : records) {
      d.name = trimmed(d.name);
      units::check_text("device name", d.name);
      units::check_text("note", trimmed(d.note));
      const auto problems = device_problems(d);
      if (!problems.empty()) throw InputError(join(problems, "; "));
      if (const auto old = find_device(conn, d.name); old && old->kind != d.kind) {
        const int users = conn.prepare(
                                  "SELECT (SELECT count(*) FROM parts WHERE device = ?1 AND removed = 0) + "
                                  "(SELECT count(*) FROM pieces WHERE device = ?1)")
                              .bind(1, d.name)
                              .scalar<int>();
        if (users > 0)
          throw InputError(fmt::format("device '{}': kind {} cannot become {} while {} stock lines or pieces use it",
                                       old->name, devices::kind_name(old->kind), devices::kind_name(d.kind), users));
      }
      std::string values = "?, ?", updates = "kind = excluded.kind";
      for (const DeviceColumn* c : device_table_columns()) {
        const std::string_view name = c ? sql_column(*c) : "note";
        values += ", ?";
        updates += fmt::format(", {0} = excluded.{0}", name);
      }
      auto insert =
          conn.prepare(fmt::format("INSERT INTO devices ({}) VALUES ({}) ON CONFLICT(name) DO UPDATE SET {}, "
                                   "removed = 0",
                                   device_column_list(), values, updates));
      insert.bind(1, d.name).bind(2, devices::kind_name(d.kind));
      // The other families' figures are stored as NULL.
      int index = 3;
      for (const DeviceColumn* c : device_table_columns()) {
        if (c == nullptr)
          insert.bind(index, trimmed(d.note));
        else
          insert.bind(index, holds(c->family, d.kind) ? c->get(d) : std::nullopt);
        ++index;
      }
      insert.run();
    }
  });
}

std::vector<devices::MeasuredPiece> Database::pieces() const {
  std::vector<devices::MeasuredPiece> out;
  auto st = impl_->conn.prepare(fmt::format("SELECT {} FROM pieces ORDER BY device, label", kPieceColumns));
  while (st.step()) out.push_back(read_piece(st));
  return out;
}

std::optional<devices::MeasuredPiece> Database::piece(std::string_view label) const {
  auto st = impl_->conn.prepare(fmt::format("SELECT {} FROM pieces WHERE label = ?", kPieceColumns));
  st.bind(1, trimmed(label));
  if (!st.step()) return std::nullopt;
  return read_piece(st);
}

namespace {

void add_piece_locked(Database::Impl& impl, devices::MeasuredPiece m) {
  m.label = trimmed(m.label);
  m.device = trimmed(m.device);
  m.note = trimmed(m.note);
  units::check_text("label", m.label);
  units::check_text("device", m.device);
  units::check_text("note", m.note);
  const auto dev = find_device(impl.conn, m.device);
  if (!dev) throw InputError(fmt::format("piece '{}': device '{}' is not in the device list", m.label, m.device));
  const auto problems = piece_problems(m, *dev);
  if (!problems.empty()) throw InputError(join(problems, "; "));
  if (impl.conn.prepare("SELECT count(*) FROM pieces WHERE label = ?").bind(1, m.label).scalar<int>() > 0)
    throw InputError(fmt::format("piece label '{}' is already used", m.label));
  impl.conn.prepare("INSERT INTO pieces (label, device, idss, vp, hfe, uncertainty, note) VALUES (?, ?, ?, ?, ?, ?, ?)")
      .bind_all(m.label, dev->name, m.idss_a, m.vp_v, m.hfe, m.uncertainty, m.note)
      .run();
}

}  // namespace

void Database::add_piece(const devices::MeasuredPiece& piece) {
  impl_->immediate([&] { add_piece_locked(*impl_, piece); });
}

void Database::add_pieces(const std::vector<devices::MeasuredPiece>& pieces) {
  impl_->immediate([&] {
    for (const auto& m : pieces) add_piece_locked(*impl_, m);
  });
}

// --- removing a device type --------------------------------------------------------------

namespace {

DeviceUsers users_of(const Database::Impl& impl, std::string_view name) {
  DeviceUsers u;
  auto lines =
      impl.conn.prepare(fmt::format("SELECT {} FROM parts WHERE device = ? AND removed = 0 ORDER BY id", kPartColumns));
  lines.bind(1, name);
  while (lines.step()) u.lines.push_back(read_part(lines));
  auto pieces = impl.conn.prepare("SELECT label FROM pieces WHERE device = ? ORDER BY label");
  pieces.bind(1, name);
  while (pieces.step()) u.pieces.push_back(pieces.text(0));
  return u;
}

devices::DeviceRecord listed_device(const Database::Impl& impl, std::string_view name) {
  const auto dev = find_device(impl.conn, trimmed(name));
  if (!dev) throw InputError(fmt::format("device '{}' is not in the device list", units::clip(trimmed(name))));
  return *dev;
}

}  // namespace

DeviceUsers Database::device_users(std::string_view name) const {
  return impl_->snapshot([&] { return users_of(*impl_, listed_device(*impl_, name).name); });
}

RemovedDevice Database::remove_device(std::string_view name, const std::vector<std::string>& designs, bool cascade,
                                      std::string_view reason) {
  return impl_->immediate([&] {
    auto& conn = impl_->conn;
    RemovedDevice r;
    r.name = listed_device(*impl_, name).name;
    const DeviceUsers users = users_of(*impl_, r.name);
    if (!cascade && (!users.empty() || !designs.empty()))
      throw InputError(
          fmt::format("device '{}' is in use ({} stock lines, {} measured pieces, {} kept designs); "
                      "nothing removed",
                      r.name, users.lines.size(), users.pieces.size(), designs.size()));
    for (const auto& line : users.lines) {
      conn.prepare("DELETE FROM reservations WHERE part_id = ?").bind(1, line.id).run();
      impl_->record_change(line.id, -line.qty, reason);
      conn.prepare("UPDATE parts SET removed = 1 WHERE id = ?").bind(1, line.id).run();
    }
    conn.prepare("DELETE FROM pieces WHERE device = ?").bind(1, r.name).run();
    for (const auto& id : designs) {
      // A design a build records stays with it, as the ledger keeps removed lines.
      if (conn.prepare("SELECT count(*) FROM builds WHERE design_id = ?").bind(1, id).scalar<int>() > 0) {
        r.designs_built.push_back(id);
      } else if (conn.prepare("DELETE FROM designs WHERE id = ?").bind(1, id).run() > 0) {
        r.designs.push_back(id);
      }
    }
    conn.prepare("UPDATE devices SET removed = 1 WHERE name = ?").bind(1, r.name).run();
    r.lines = users.lines;
    r.pieces = users.pieces;
    return r;
  });
}

// --- ledger and health -------------------------------------------------------------------

std::vector<LedgerEntry> Database::ledger(const LedgerFilter& filter) const {
  std::optional<std::string> since;
  if (filter.since) since = normalise_since(*filter.since);
  std::optional<std::string> device;
  if (filter.device) device = trimmed(*filter.device);
  auto st = impl_->conn.prepare(
      "SELECT l.id, l.at, l.part_id, l.part_desc, l.delta, l.reason, l.build_id FROM ledger l "
      "JOIN parts p ON p.id = l.part_id WHERE (?1 IS NULL OR l.at >= ?1) "
      "AND (?2 IS NULL OR (p.kind IN ('R', 'C') AND abs(p.value - ?2) <= ?4 * abs(?2))) "
      "AND (?3 IS NULL OR p.device = ?3) ORDER BY l.id");
  st.bind_all(since, filter.value, device, kSameValue);
  std::vector<LedgerEntry> out;
  while (st.step()) {
    LedgerEntry e;
    e.id = st.int64(0);
    e.when = st.text(1);
    e.part_id = st.int64(2);
    e.part = st.text(3);
    e.delta = st.int32(4);
    e.reason = st.text(5);
    e.build_id = st.opt_int64(6);
    out.push_back(std::move(e));
  }
  return out;
}

CheckReport Database::check() const {
  return impl_->snapshot([&] {
    const auto& conn = impl_->conn;
    CheckReport r;
    auto integrity = conn.prepare("PRAGMA integrity_check");
    while (integrity.step())
      if (const auto line = integrity.text(0); line != "ok") r.integrity.push_back(line);
    // NOTES 7, and with it the triggers that keep NOTES 1 and 2.
    r.structure = schema_damage(conn, impl_->version);
    // The checks below read every table: with one missing they could not run.
    if (std::any_of(r.structure.begin(), r.structure.end(),
                    [](const std::string& s) { return s.starts_with("table ") && s.ends_with(" is missing"); }))
      return r;

    auto fk = conn.prepare("PRAGMA foreign_key_check");
    while (fk.step())
      r.foreign_keys.push_back(fmt::format("{} row {} refers to a missing {} row", fk.text(0),
                                           fk.is_null(1) ? std::string("?") : std::to_string(fk.int64(1)), fk.text(2)));

    auto describe_line = [&](std::int64_t id) {
      const auto p = impl_->load_part(id);
      return p ? fmt::format("stock line {} ({})", id, describe(*p)) : fmt::format("stock line {}", id);
    };

    // NOTES 1: qty equals the ledger sum.
    auto sums = conn.prepare(
        "SELECT p.id, p.qty, coalesce((SELECT sum(delta) FROM ledger l WHERE l.part_id = p.id), 0) AS s "
        "FROM parts p WHERE p.qty <> s ORDER BY p.id");
    while (sums.step())
      r.ledger.push_back(fmt::format("{}: qty {} but the ledger sums to {}", describe_line(sums.int64(0)),
                                     sums.int64(1), sums.int64(2)));

    // NOTES 2 and 3.
    auto counts = conn.prepare(
        "SELECT p.id, p.qty, p.reserved, p.removed, "
        "coalesce((SELECT sum(qty) FROM reservations r WHERE r.part_id = p.id), 0) AS held "
        "FROM parts p WHERE p.qty < 0 OR p.reserved < 0 OR p.reserved > p.qty OR p.reserved <> held "
        "OR (p.removed <> 0 AND (p.qty <> 0 OR p.reserved <> 0)) ORDER BY p.id");
    while (counts.step()) {
      const auto id = counts.int64(0);
      const auto qty = counts.int64(1);
      const auto reserved = counts.int64(2);
      const auto held = counts.int64(4);
      if (qty < 0) r.other.push_back(fmt::format("{}: qty {} is negative", describe_line(id), qty));
      if (reserved < 0) r.other.push_back(fmt::format("{}: reserved {} is negative", describe_line(id), reserved));
      if (reserved > qty)
        r.other.push_back(fmt::format("{}: reserved {} is more than qty {}", describe_line(id), reserved, qty));
      if (reserved != held)
        r.other.push_back(fmt::format("{}: reserved {} but reservations hold {}", describe_line(id), reserved, held));
      if (counts.int64(3) != 0 && (qty != 0 || reserved != 0))
        r.other.push_back(
            fmt::format("{}: removed but still counts {} pieces ({} reserved)", describe_line(id), qty, reserved));
    }

    // NOTES 4 and 5 (when the table has the column: a damaged file may not).
    auto kinds = conn.prepare(
        "SELECT p.id, p.kind, d.kind FROM parts p JOIN devices d ON d.name = p.device "
        "WHERE p.removed = 0 AND p.kind <> d.kind");
    while (kinds.step())
      r.other.push_back(
          fmt::format("{}: kind {} but device kind {}", describe_line(kinds.int64(0)), kinds.text(1), kinds.text(2)));
    if (conn.prepare("SELECT count(*) FROM pragma_table_info('devices') WHERE name = 'removed'").scalar<int>() > 0) {
      auto gone = conn.prepare(
          "SELECT p.id, d.name FROM parts p JOIN devices d ON d.name = p.device WHERE p.removed = 0 AND d.removed = 1");
      while (gone.step())
        r.other.push_back(
            fmt::format("{}: names device {}, which was removed", describe_line(gone.int64(0)), gone.text(1)));
      auto orphans =
          conn.prepare("SELECT m.label, d.name FROM pieces m JOIN devices d ON d.name = m.device WHERE d.removed = 1");
      while (orphans.step())
        r.other.push_back(
            fmt::format("measured piece {}: names device {}, which was removed", orphans.text(0), orphans.text(1)));
    }
    return r;
  });
}

std::filesystem::path default_database_path() {
  auto env = [](const char* name) -> std::string {
    const char* v = std::getenv(name);
    return v != nullptr ? std::string(v) : std::string();
  };
  if (auto db = env("SHELFSTAGE_DB"); !db.empty()) return db;
  // XDG Base Directory Specification: a relative XDG_DATA_HOME is invalid and ignored.
  if (auto xdg = env("XDG_DATA_HOME"); !xdg.empty() && std::filesystem::path(xdg).is_absolute())
    return std::filesystem::path(xdg) / "shelfstage" / "stock.db";
  if (auto home = env("HOME"); !home.empty())
    return std::filesystem::path(home) / ".local" / "share" / "shelfstage" / "stock.db";
  throw InputError("no database path: HOME is not set; give --db FILE or set SHELFSTAGE_DB");
}

}  // namespace shelfstage::store
