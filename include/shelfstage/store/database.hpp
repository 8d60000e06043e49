// The stock database: one SQLite file, the only place in the program that talks to SQLite.
#pragma once
#include <cstdint>
#include <filesystem>
#include <functional>
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
inline constexpr int kSchemaVersion = 5;

/// What `check` found. ok() when every list is empty.
struct CheckReport {
  std::vector<std::string> integrity;     ///< PRAGMA integrity_check lines other than "ok"
  std::vector<std::string> structure;     ///< tables, indexes, triggers missing or not shelfstage's
  std::vector<std::string> foreign_keys;  ///< PRAGMA foreign_key_check rows
  std::vector<std::string> ledger;        ///< parts whose qty differs from their ledger sum
  std::vector<std::string> other;         ///< reserved > qty, negative counts, ...
  bool ok() const {
    return integrity.empty() && structure.empty() && foreign_keys.empty() && ledger.empty() && other.empty();
  }
};

/// What still names a device type (Database::device_users).
struct DeviceUsers {
  std::vector<Part> lines;          ///< stock lines on the shelf
  std::vector<std::string> pieces;  ///< labels of its measured pieces
  bool empty() const { return lines.empty() && pieces.empty(); }
};

/// What Database::remove_device did.
struct RemovedDevice {
  std::string name;                        ///< as the device list spelled it
  std::vector<Part> lines;                 ///< stock lines written off and removed (as they were)
  std::vector<std::string> pieces;         ///< measured pieces deleted
  std::vector<std::string> designs;        ///< kept designs forgotten
  std::vector<std::string> designs_built;  ///< kept designs left alone: builds record them
};

/// Filter for the ledger listing.
struct LedgerFilter {
  std::optional<std::string> since;   ///< ISO date or date-time; entries at or after it
  std::optional<double> value;        ///< only parts of this value (R or C)
  std::optional<std::string> device;  ///< only this transistor type
};

/// A connection to one stock file. Every connection runs with WAL, synchronous=FULL,
/// foreign_keys=ON and a busy timeout; every read-modify-write is one BEGIN IMMEDIATE
/// transaction, so a failure or a crash leaves the old state.
class Database {
 public:
  /// Creates a new, empty database at path. Refuses (InputError) when the file exists, or
  /// when the path cannot be written (a read-only file system, no permission), saying which.
  static Database create(const std::filesystem::path& path);
  /// Opens an existing database, migrating an older schema forward. Missing file:
  /// InputError naming the path and suggesting `shelfstage init`; a path that is not a
  /// regular file (a folder, device, fifo): InputError. Newer schema, corrupt or locked:
  /// DatabaseError.
  ///
  /// The schema is verified on opening (its tables, indexes and triggers against the ones
  /// the migrations make, and user_version). A damaged file opens read-only: reads work,
  /// and every write throws DatabaseError naming the damage and suggesting `shelfstage check`.
  /// A file on a read-only file system, or one the user may not write, opens read-only too.
  static Database open(const std::filesystem::path& path);

  Database(Database&&) noexcept;
  Database& operator=(Database&&) noexcept;
  ~Database();

  int schema_version() const;
  const std::filesystem::path& path() const;
  /// Why writes are refused (damage, a read-only file system), or nullopt when they are not.
  std::optional<std::string> read_only_reason() const;
  /// Calls observer after every change this connection commits (not the migrations that
  /// open() may run). The CLI uses it to know that a command has changed the stock.
  void on_commit(std::function<void()> observer);

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
  /// As add_parts for the rows of a file: every row that cannot be added (the pieces would
  /// make a line's count overflow, its device is gone) is named "SOURCE:LINE: ..." with
  /// lines[i] the line of parts[i], and all of them are thrown in one CsvError; nothing is added.
  void import_parts(const std::vector<Part>& parts, std::string_view reason, std::string_view source,
                    const std::vector<std::size_t>& lines);
  /// Changes the quantity on hand by delta (a recount, a loss). Refuses to go below the
  /// reserved count or below zero, and refuses unknown or removed lines (InputError).
  /// Writes a ledger entry (none for delta 0).
  void adjust(std::int64_t part_id, int delta, std::string_view reason);
  /// Takes a line off the shelf: its quantity goes to zero through the ledger and the line
  /// is hidden from listings (the ledger keeps its history). Refuses when pieces are reserved.
  void remove_part(std::int64_t part_id, std::string_view reason);

  // --- devices and measured pieces ---------------------------------------------------
  /// The device list (types taken off it with remove_device are not in it).
  std::vector<devices::DeviceRecord> device_records() const;
  std::optional<devices::DeviceRecord> device(std::string_view name) const;
  /// Adds or replaces (by name) in one transaction; a removed type of that name comes back
  /// with the new figures. Validates ranges and text (InputError).
  void put_devices(const std::vector<devices::DeviceRecord>& records);
  /// The stock lines on the shelf and the measured pieces that name a device type.
  /// InputError when the type is not in the device list.
  DeviceUsers device_users(std::string_view name) const;
  /// Takes a device type off the device list. Its row stays, marked removed, because stock
  /// lines taken off the shelf and the ledger name it (a type added again later comes back).
  /// Without cascade it is refused (InputError naming them) while stock lines on the shelf,
  /// measured pieces, or the kept designs named in `designs` (those that use it; the store
  /// does not look inside a design) refer to it. With cascade, in the same transaction:
  /// reservations on its lines are released, each line is written off through the ledger with
  /// `reason` and removed, its pieces are deleted, and the designs are forgotten except those
  /// a build records (history, like the ledger).
  RemovedDevice remove_device(std::string_view name, const std::vector<std::string>& designs, bool cascade,
                              std::string_view reason);
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
