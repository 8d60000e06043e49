// Plain data of the stock: a part on the shelf, the figure columns of a transistor type, and
// a ledger line; the checks of each. No SQLite here, so the synthesizer can take a snapshot
// of the stock without depending on the database.
#pragma once
#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/devices/record.hpp"
#include "shelfstage/units/notation.hpp"
#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::store {

/// What a stock line is. Codes as scripts and CSV files write them (docs/interface.md):
/// R, C, NJFET, PJFET, NPN, PNP, OPAMP, in that order. An OPAMP line counts packages (each
/// holding OpampParams::channels amplifiers).
enum class PartKind { resistor, capacitor, njfet, pjfet, npn, pnp, opamp };

std::string_view kind_code(PartKind kind);
/// Parses a kind code (case-insensitive); false for anything else.
bool parse_kind_code(std::string_view text, PartKind& out);
inline bool is_passive(PartKind k) { return k == PartKind::resistor || k == PartKind::capacitor; }
/// The part kind of a device type: NJFET -> njfet, ..., PNP -> pnp, OPAMP -> opamp.
PartKind part_kind(devices::DeviceKind kind);
/// The device kind of a part kind; false for R and C.
bool device_kind(PartKind kind, devices::DeviceKind& out);
/// "R, C, NJFET, PJFET, NPN, PNP, OPAMP": every kind code, for messages.
std::string_view kind_codes_text();

/// One stock line: a value in one bin. The same value may sit in several bins (several lines).
struct Part {
  std::int64_t id = 0;  ///< database row id, 0 before insertion
  PartKind kind = PartKind::resistor;
  double value = 0.0;  ///< ohms (R) or farads (C); 0 for transistors and op-amps
  std::string device;  ///< device name (transistors, op-amps); empty for R and C
  std::optional<units::Tolerance> tol;
  std::optional<double> power_w;  ///< resistor power rating, watts
  std::optional<double> volts;    ///< capacitor voltage rating, volts
  std::string dielectric;         ///< C0G, X7R, film, electrolytic, tantalum, ... (C only)
  std::string package;            ///< free package note: 0207, 5 mm radial, TO-92 ...
  int qty = 0;                    ///< pieces on hand (op-amps: packages)
  int reserved = 0;               ///< pieces held for planned builds (<= qty)
  std::string bin;
  std::string note;
  bool removed = false;  ///< taken off the shelf (Database::remove_part); history kept

  int available() const { return qty - reserved; }
  /// Polarised capacitor (electrolytic or tantalum): series use and reverse voltage forbidden.
  bool polarised() const;
};

/// Checks the fields of a part on their own (not whether its device exists): one message per
/// problem, naming the field and the value ("qty -3 is negative"); empty when the part is
/// sound. Rules: R and C have a finite value > 0 (C at most 1 F, which catches "4.7" meant
/// as 4.7u) and no device; transistors and op-amps have a device and no value; 0 <= reserved <= qty;
/// a tolerance within [0, 1) below and [0, 10] above; power (R only) and volts (C only)
/// finite and > 0; a dielectric only on C.
std::vector<std::string> part_problems(const Part& part);

/// Checks a device type on its own: one message per problem, naming the device, the field
/// (its device CSV column) and the value; empty when sound. JFET: 0 < idss_min <= idss_max;
/// vp_min <= vp_max (numerically), both negative for N-channel and both positive for
/// P-channel; typicals inside their range; lambda, cgs, cgd >= 0. BJT: 0 < hfe_min <=
/// hfe_max; is, vaf > 0; cje, cjc, vce_sat >= 0. Op-amp: channels 1, 2 or 4; 0 < vs_min <
/// vs_max; gbw, slew > 0 and aol > 1, a stated minimum likewise and not above the typical;
/// pole2 > 0; output drops >= 0 and common-mode drops >= -1 V, each pair leaving some range
/// at vs_min (hi + lo < vs_min); out_drop_ohm, vos, ib, ios, en, in, iq >= 0; iout_max > 0;
/// v_max, when stated, not below vs_max. Every figure finite; the name not empty.
std::vector<std::string> device_problems(const devices::DeviceRecord& device);

/// One figure of a device type: its column in a device file and its key in a type's JSON
/// (docs/interface.md), the one list both are written from.
struct DeviceColumn {
  enum class Family { jfet, bjt, rating, opamp };
  /// How a file gives it: required; optional with the record's default; an optional typical
  /// value; a temperature coefficient (a number or a percentage, "/K" allowed); a maximum
  /// rating (optional, kept as a magnitude); optional, empty meaning the datasheet does not
  /// state it (an op-amp's minimum GBW, its noise).
  enum class Form { required, defaulted, typical, tempco, rating, stated };
  /// How its number is written beyond SI notation with the unit's symbol: a whole count; an
  /// open-loop gain (units::parse_open_loop_gain: V/V, V/mV, dB); a slew rate
  /// (units::parse_slew_rate: V/us or V/s).
  enum class Notation { plain, count, gain, slew };
  std::string_view name;  ///< "idss_min"
  Family family;
  units::Unit unit;
  Form form;
  /// The record's figure; empty for an optional one not given.
  std::optional<double> (*get)(const devices::DeviceRecord&);
  void (*set)(devices::DeviceRecord&, double);
  Notation notation;
};

/// Every figure column in the order files and JSON list them: the JFET figures, the BJT
/// figures, the maximum ratings, the op-amp figures.
std::span<const DeviceColumn> device_columns();
/// The family whose figures a kind's record carries (besides the ratings).
DeviceColumn::Family device_family(devices::DeviceKind kind);

/// Checks a measured piece against its device's kind: a label; uncertainty in [0, 1);
/// JFET pieces carry idss (> 0) and/or vp (signed as the channel type) and no hfe; BJT
/// pieces carry hfe (> 0) and no idss or vp; an op-amp has no measured pieces.
std::vector<std::string> piece_problems(const devices::MeasuredPiece& piece, const devices::DeviceRecord& device);

/// A short human description: "R 4.7k 5% 0.25W bin A3", "C 100u -20/+80% 25V electrolytic",
/// "NPN SQ-410 bin T1", "OPAMP SA-2904 bin E1". Used for ledger lines and messages; always clean text (units/text.hpp),
/// text that is not being escaped.
std::string describe(const Part& part);

/// One append-only ledger line: a change of quantity on hand, and why.
struct LedgerEntry {
  std::int64_t id = 0;
  std::string when;  ///< ISO 8601 UTC, "2026-12-01T21:53:00Z"
  std::int64_t part_id = 0;
  std::string part;  ///< human description at the time: "R 4.7k 5% bin A3"
  int delta = 0;     ///< pieces added (+) or taken (-)
  std::string reason;
  std::optional<std::int64_t> build_id;
};

}  // namespace shelfstage::store
