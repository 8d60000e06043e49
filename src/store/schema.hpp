// The stock file's schema, one SQL script per version, applied in order by Database.
#pragma once
#include <cstdint>
#include <string_view>

namespace shelfstage::store::detail {

/// PRAGMA application_id of a shelfstage stock file: "SHLF" in ASCII.
inline constexpr std::int32_t kApplicationId = 0x53484C46;

/// Version 1: parts, devices, measured pieces, the append-only ledger.
/// NOTES: parts.qty == sum(ledger.delta) (trigger ledger_apply adds each new delta; UPDATE
/// and DELETE of ledger rows RAISE). Removed lines stay (removed = 1) so history keeps them.
inline constexpr std::string_view kSchemaV1 = R"sql(
CREATE TABLE devices (
  name      TEXT PRIMARY KEY COLLATE NOCASE,
  kind      TEXT NOT NULL CHECK (kind IN ('NJFET', 'PJFET', 'NPN', 'PNP')),
  idss_min  REAL,   -- amperes (JFET)
  idss_max  REAL,
  idss_typ  REAL,
  vp_min    REAL,   -- volts, signed as on a datasheet, vp_min <= vp_max (JFET)
  vp_max    REAL,
  vp_typ    REAL,
  lambda    REAL,   -- 1/V
  cgs       REAL,   -- farads
  cgd       REAL,   -- farads
  tc_idss   REAL,   -- fraction per kelvin
  tc_vp     REAL,   -- volts per kelvin, on |VP|
  hfe_min   REAL,   -- (BJT)
  hfe_max   REAL,
  hfe_typ   REAL,
  is_a      REAL,   -- amperes
  vaf       REAL,   -- volts
  cje       REAL,   -- farads
  cjc       REAL,   -- farads
  vce_sat   REAL,   -- volts
  note      TEXT NOT NULL DEFAULT ''
);

CREATE TABLE parts (
  id         INTEGER PRIMARY KEY,
  kind       TEXT NOT NULL CHECK (kind IN ('R', 'C', 'NJFET', 'PJFET', 'NPN', 'PNP')),
  value      REAL NOT NULL DEFAULT 0,        -- ohms or farads; 0 for transistors
  device     TEXT COLLATE NOCASE REFERENCES devices(name),  -- transistors only
  tol_minus  REAL,                           -- fraction below nominal; NULL: unknown
  tol_plus   REAL,                           -- fraction above nominal
  power_w    REAL,                           -- resistor rating, watts
  volts      REAL,                           -- capacitor rating, volts
  dielectric TEXT NOT NULL DEFAULT '',
  package    TEXT NOT NULL DEFAULT '',
  qty        INTEGER NOT NULL DEFAULT 0,     -- pieces on hand == sum of the ledger
  reserved   INTEGER NOT NULL DEFAULT 0,     -- pieces held for planned builds
  bin        TEXT NOT NULL DEFAULT '',
  note       TEXT NOT NULL DEFAULT '',
  removed    INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1)),
  CHECK ((kind IN ('R', 'C')) = (device IS NULL)),
  CHECK (qty >= 0 AND reserved >= 0 AND reserved <= qty)
);
CREATE INDEX parts_value ON parts(kind, value);
CREATE INDEX parts_device ON parts(device);

CREATE TABLE pieces (
  id          INTEGER PRIMARY KEY,
  label       TEXT NOT NULL UNIQUE COLLATE NOCASE,
  device      TEXT NOT NULL COLLATE NOCASE REFERENCES devices(name),
  idss        REAL,                          -- amperes, measured
  vp          REAL,                          -- volts, signed, measured
  hfe         REAL,                          -- measured
  uncertainty REAL NOT NULL,                 -- fraction
  note        TEXT NOT NULL DEFAULT ''
);
CREATE INDEX pieces_device ON pieces(device);

CREATE TABLE ledger (
  id        INTEGER PRIMARY KEY,
  at        TEXT NOT NULL,                   -- ISO 8601 UTC, 2026-12-01T21:53:00Z
  part_id   INTEGER NOT NULL REFERENCES parts(id),
  part_desc TEXT NOT NULL,                   -- the line as it was described then
  delta     INTEGER NOT NULL CHECK (delta <> 0),
  reason    TEXT NOT NULL DEFAULT '',
  build_id  INTEGER                          -- builds(id) from version 2 on
);
CREATE INDEX ledger_part ON ledger(part_id);

CREATE TRIGGER ledger_no_update BEFORE UPDATE ON ledger
BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER ledger_no_delete BEFORE DELETE ON ledger
BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER ledger_apply AFTER INSERT ON ledger
BEGIN UPDATE parts SET qty = qty + NEW.delta WHERE id = NEW.part_id; END;
)sql";

/// Version 2: saved designs, builds with their lines, and reservations for later layers.
/// Pieces reserved under version 1 move into reservations held by no design.
/// NOTES: parts.reserved == sum(reservations.qty) (triggers below).
inline constexpr std::string_view kSchemaV2 = R"sql(
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
)sql";

/// Version 3: device types can be taken off the list (devices.removed: the row stays, as stock
/// lines and the ledger name it), and the index that finds a stock line by kind, bin and value
/// in one seek (an import looks one up per row).
/// NOTES: no stock line on the shelf (removed = 0) and no measured piece names a removed
/// device (Database::remove_device keeps it; check() verifies it).
inline constexpr std::string_view kSchemaV3 = R"sql(
ALTER TABLE devices ADD COLUMN removed INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1));
CREATE INDEX parts_line ON parts(kind, bin COLLATE NOCASE, value);
)sql";

/// Version 4: a transistor type's absolute maximum ratings (magnitudes; NULL: not stated).
inline constexpr std::string_view kSchemaV4 = R"sql(
ALTER TABLE devices ADD COLUMN v_max REAL;      -- volts: VDS(max) or VCEO
ALTER TABLE devices ADD COLUMN v_rev_max REAL;  -- volts: gate-source reverse or VEBO
ALTER TABLE devices ADD COLUMN p_max REAL;      -- watts at 25 °C ambient
ALTER TABLE devices ADD COLUMN p_derate REAL;   -- watts per kelvin above 25 °C
)sql";

/// Version 5: op-amp types. The kind CHECKs of devices and parts take 'OPAMP', and devices
/// gains the op-amp figures (NULL for a transistor, as the other family's are). SQLite cannot
/// alter a CHECK, so both tables are rebuilt by SQLite's documented procedure for other
/// table changes (ALTER TABLE, "Making Other Kinds Of Table Schema Changes"): a new table,
/// the rows copied, the old one dropped, the new one renamed, its indexes made again. It runs
/// in the migration's transaction with foreign keys off (Database: migrate), and
/// legacy_alter_table on for the renames, which otherwise check every trigger and refuse
/// ledger_apply and the reservation triggers while the old parts table is gone (their text
/// names parts and reads the new table once it has the name). PRAGMA foreign_key_check runs
/// before the commit. Row ids, the removed flags and every other table are kept as they were.
/// NOTES: an OPAMP stock line names a device of kind OPAMP and counts packages.
inline constexpr std::string_view kSchemaV5 = R"sql(
PRAGMA legacy_alter_table = ON;

CREATE TABLE devices_v5 (
  name      TEXT PRIMARY KEY COLLATE NOCASE,
  kind      TEXT NOT NULL CHECK (kind IN ('NJFET', 'PJFET', 'NPN', 'PNP', 'OPAMP')),
  idss_min  REAL,   -- amperes (JFET)
  idss_max  REAL,
  idss_typ  REAL,
  vp_min    REAL,   -- volts, signed as on a datasheet, vp_min <= vp_max (JFET)
  vp_max    REAL,
  vp_typ    REAL,
  lambda    REAL,   -- 1/V
  cgs       REAL,   -- farads
  cgd       REAL,   -- farads
  tc_idss   REAL,   -- fraction per kelvin
  tc_vp     REAL,   -- volts per kelvin, on |VP|
  hfe_min   REAL,   -- (BJT)
  hfe_max   REAL,
  hfe_typ   REAL,
  is_a      REAL,   -- amperes
  vaf       REAL,   -- volts
  cje       REAL,   -- farads
  cjc       REAL,   -- farads
  vce_sat   REAL,   -- volts
  note      TEXT NOT NULL DEFAULT '',
  removed   INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1)),
  v_max     REAL,   -- volts: VDS(max), VCEO, or an op-amp's total supply
  v_rev_max REAL,   -- volts: gate-source reverse, VEBO, or an op-amp's differential input
  p_max     REAL,   -- watts at 25 °C ambient
  p_derate  REAL,   -- watts per kelvin above 25 °C
  channels  INTEGER, -- (op-amp) amplifiers per package
  vs_min    REAL,   -- volts, supply span V+ - V-
  vs_max    REAL,
  gbw_min   REAL,   -- hertz; NULL: not stated
  gbw       REAL,   -- hertz, typical
  slew_min  REAL,   -- volts per second; NULL: not stated
  slew      REAL,
  aol_min   REAL,   -- V/V; NULL: not stated
  aol       REAL,
  pole2     REAL,   -- hertz; NULL: one pole
  out_drop_hi  REAL,  -- volts short of V+ at light load
  out_drop_lo  REAL,  -- volts short of V-
  out_drop_ohm REAL,  -- extra drop per ampere of output current
  iout_max  REAL,   -- amperes
  cm_drop_hi REAL,  -- volts short of V+ the inputs reach (negative: beyond it)
  cm_drop_lo REAL,  -- volts short of V-
  vos       REAL,   -- volts, maximum
  ib        REAL,   -- amperes, maximum
  ios       REAL,   -- amperes, maximum; NULL: not stated
  en        REAL,   -- V per root hertz at 1 kHz
  in_a      REAL,   -- A per root hertz
  iq        REAL    -- amperes per amplifier, maximum
);
INSERT INTO devices_v5 (name, kind, idss_min, idss_max, idss_typ, vp_min, vp_max, vp_typ, lambda, cgs, cgd,
                        tc_idss, tc_vp, hfe_min, hfe_max, hfe_typ, is_a, vaf, cje, cjc, vce_sat, note, removed,
                        v_max, v_rev_max, p_max, p_derate)
  SELECT name, kind, idss_min, idss_max, idss_typ, vp_min, vp_max, vp_typ, lambda, cgs, cgd,
         tc_idss, tc_vp, hfe_min, hfe_max, hfe_typ, is_a, vaf, cje, cjc, vce_sat, note, removed,
         v_max, v_rev_max, p_max, p_derate FROM devices;
DROP TABLE devices;
ALTER TABLE devices_v5 RENAME TO devices;

CREATE TABLE parts_v5 (
  id         INTEGER PRIMARY KEY,
  kind       TEXT NOT NULL CHECK (kind IN ('R', 'C', 'NJFET', 'PJFET', 'NPN', 'PNP', 'OPAMP')),
  value      REAL NOT NULL DEFAULT 0,        -- ohms or farads; 0 for transistors and op-amps
  device     TEXT COLLATE NOCASE REFERENCES devices(name),  -- transistors and op-amps only
  tol_minus  REAL,                           -- fraction below nominal; NULL: unknown
  tol_plus   REAL,                           -- fraction above nominal
  power_w    REAL,                           -- resistor rating, watts
  volts      REAL,                           -- capacitor rating, volts
  dielectric TEXT NOT NULL DEFAULT '',
  package    TEXT NOT NULL DEFAULT '',
  qty        INTEGER NOT NULL DEFAULT 0,     -- pieces (op-amps: packages) on hand == sum of the ledger
  reserved   INTEGER NOT NULL DEFAULT 0,     -- pieces held for planned builds
  bin        TEXT NOT NULL DEFAULT '',
  note       TEXT NOT NULL DEFAULT '',
  removed    INTEGER NOT NULL DEFAULT 0 CHECK (removed IN (0, 1)),
  CHECK ((kind IN ('R', 'C')) = (device IS NULL)),
  CHECK (qty >= 0 AND reserved >= 0 AND reserved <= qty)
);
INSERT INTO parts_v5 (id, kind, value, device, tol_minus, tol_plus, power_w, volts, dielectric, package, qty,
                      reserved, bin, note, removed)
  SELECT id, kind, value, device, tol_minus, tol_plus, power_w, volts, dielectric, package, qty,
         reserved, bin, note, removed FROM parts;
DROP TABLE parts;
ALTER TABLE parts_v5 RENAME TO parts;
CREATE INDEX parts_value ON parts(kind, value);
CREATE INDEX parts_device ON parts(device);
CREATE INDEX parts_line ON parts(kind, bin COLLATE NOCASE, value);

PRAGMA legacy_alter_table = OFF;
)sql";

}  // namespace shelfstage::store::detail
