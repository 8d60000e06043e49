// Plain data of the stock: a part on the shelf and a ledger line. No SQLite here, so the
// synthesizer can take a snapshot of the stock without depending on the database.
#pragma once
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "shelfstage/units/tolerance.hpp"

namespace shelfstage::store {

/// What a stock line is. Codes as INTERFACE.md fixes them: R, C, NJFET, PJFET, NPN, PNP.
enum class PartKind { resistor, capacitor, njfet, pjfet, npn, pnp };

std::string_view kind_code(PartKind kind);
/// Parses a kind code (case-insensitive); false for anything else.
bool parse_kind_code(std::string_view text, PartKind& out);
inline bool is_passive(PartKind k) { return k == PartKind::resistor || k == PartKind::capacitor; }

/// One stock line: a value in one bin. The same value may sit in several bins (several lines).
struct Part {
  std::int64_t id = 0;  ///< database row id, 0 before insertion
  PartKind kind = PartKind::resistor;
  double value = 0.0;   ///< ohms (R) or farads (C); 0 for transistors
  std::string device;   ///< device name (transistors); empty for R and C
  std::optional<units::Tolerance> tol;
  std::optional<double> power_w;  ///< resistor power rating, watts
  std::optional<double> volts;    ///< capacitor voltage rating, volts
  std::string dielectric;         ///< C0G, X7R, film, electrolytic, tantalum, ... (C only)
  std::string package;            ///< free package note: 0207, 5 mm radial, TO-92 ...
  int qty = 0;                    ///< pieces on hand
  int reserved = 0;               ///< pieces held for planned builds (<= qty)
  std::string bin;
  std::string note;

  int available() const { return qty - reserved; }
  /// Polarised capacitor (electrolytic or tantalum): series use and reverse voltage forbidden.
  bool polarised() const;
};

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
