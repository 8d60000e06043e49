// The stock database: one SQLite file, the only place in the program that talks to SQLite.
#pragma once
#include <cstdint>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/store/part.hpp"

namespace shelfstage::store {

/// The schema version this build writes. Older files are migrated forward on open; newer
/// files are refused with a DatabaseError.
inline constexpr int kSchemaVersion = 2;

/// What `check` found. ok() when every list is empty.
struct CheckReport {
  std::vector<std::string> integrity;      ///< PRAGMA integrity_check lines other than "ok"
  std::vector<std::string> foreign_keys;   ///< PRAGMA foreign_key_check rows
  std::vector<std::string> ledger;         ///< parts whose qty differs from their ledger sum
  std::vector<std::string> other;          ///< reserved > qty, negative counts, ...
  bool ok() const { return integrity.empty() && foreign_keys.empty() && ledger.empty() && other.empty(); }
};

/// Filter for the ledger listing.
struct LedgerFilter {
  std::optional<std::string> since;  ///< ISO date or date-time; entries at or after it
  std::optional<double> value;       ///< only parts of this value (R or C)
  std::optional<std::string> device; ///< only this transistor type
};

/// A connection to one stock file. Every connection runs with WAL, synchronous=FULL,
/// foreign_keys=ON and a busy timeout; every read-modify-write is one BEGIN IMMEDIATE
/// transaction, so a failure or a crash leaves the old state.
class Database {
 public:
  /// Creates a new, empty database at path. Refuses (InputError) when the file exists.
  static Database create(const std::filesystem::path& path);
  /// Opens an existing database, migrating an older schema forward. Missing file:
  /// InputError naming the path and suggesting `shelfstage init`. Newer schema, corrupt or
  /// locked: DatabaseError.
  static Database open(const std::filesystem::path& path);

  Database(Database&&) noexcept;
  Database& operator=(Database&&) noexcept;
  ~Database();

  int schema_version() const;
  const std::filesystem::path& path() const;

  // --- parts -------------------------------------------------------------------------
  /// All stock lines on the shelf (not removed ones), ordered by kind (R, C, NJFET, PJFET,
  /// NPN, PNP), value, device, bin.
  std::vector<Part> parts() const;
  /// The line with this id, a removed one too (Part::removed), or nullopt.
  std::optional<Part> part(std::int64_t id) const;
  /// Adds pieces: if a line with the same kind, value (within 1e-9 relative)/device,
  /// tolerance, ratings, dielectric, package and bin (the last three without regard to
  /// case) exists, its quantity grows (a removed such line comes back); otherwise a new
  /// line. Writes a ledger entry (none for qty 0); part.reserved > 0 is held as a
  /// reservation of no design. Returns the line id. Validates with part_problems, and a
  /// transistor's device must exist with the same kind (InputError). Device names compare
  /// without regard to case; the line takes the device list's spelling.
  std::int64_t add_part(const Part& part, std::string_view reason);
  /// Adds many lines in one transaction (CSV import): all or nothing.
  void add_parts(const std::vector<Part>& parts, std::string_view reason);
  /// Changes the quantity on hand by delta (a recount, a loss). Refuses to go below the
  /// reserved count or below zero, and refuses unknown or removed lines (InputError).
  /// Writes a ledger entry (none for delta 0).
  void adjust(std::int64_t part_id, int delta, std::string_view reason);
  /// Takes a line off the shelf: its quantity goes to zero through the ledger and the line
  /// is hidden from listings (the ledger keeps its history). Refuses when pieces are reserved.
  void remove_part(std::int64_t part_id, std::string_view reason);

  // --- devices and measured pieces ---------------------------------------------------
  std::vector<devices::DeviceRecord> device_records() const;
  std::optional<devices::DeviceRecord> device(std::string_view name) const;
  /// Adds or replaces (by name) in one transaction. Validates ranges (InputError).
  void put_devices(const std::vector<devices::DeviceRecord>& records);
  std::vector<devices::MeasuredPiece> pieces() const;
  std::optional<devices::MeasuredPiece> piece(std::string_view label) const;
  /// Stores a measured piece; the device must exist; labels are unique.
  void add_piece(const devices::MeasuredPiece& piece);
  /// Stores many measured pieces in one transaction (CSV import): all or nothing.
  void add_pieces(const std::vector<devices::MeasuredPiece>& pieces);

  // --- ledger and health -------------------------------------------------------------
  /// Entries in order of writing. InputError when filter.since is not a date like
  /// 2026-12-01 or a UTC date-time like 2026-12-01T21:53[:00][Z].
  std::vector<LedgerEntry> ledger(const LedgerFilter& filter = {}) const;
  /// Ledger invariant, integrity_check, foreign_key_check, and: 0 <= reserved <= qty,
  /// reserved equal to the reservations held, removed lines empty, transistor lines of
  /// their device's kind, the schema's guard triggers present.
  CheckReport check() const;

  /// Low-level handle for layers above that add tables through migrations (designs,
  /// builds). Opaque here; see store/detail/sqlite.hpp.
  struct Impl;
  Impl& impl() { return *impl_; }
  const Impl& impl() const { return *impl_; }

 private:
  explicit Database(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

/// Where the database lives when --db is not given: $SHELFSTAGE_DB, else
/// $XDG_DATA_HOME/shelfstage/stock.db, else ~/.local/share/shelfstage/stock.db.
std::filesystem::path default_database_path();

}  // namespace shelfstage::store
