// Storing a piece measured on the bench: label, datasheet check, the line that reports it.
#include "piece_store.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <ostream>

#include "devices_view.hpp"
#include "shelfstage/devices/fit.hpp"

namespace shelfstage::cli {

namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

}  // namespace

std::string next_piece_label(const std::vector<devices::MeasuredPiece>& pieces, std::string_view device) {
  for (int n = 1;; ++n) {
    const std::string label = fmt::format("{}-{}", device, n);
    const bool used = std::any_of(pieces.begin(), pieces.end(),
                                  [&](const devices::MeasuredPiece& p) { return lower(p.label) == lower(label); });
    if (!used) return label;
  }
}

std::vector<std::string> warn_departures(const devices::DeviceRecord& record, const devices::MeasuredPiece& piece,
                                         Context& ctx) {
  auto departures = devices::datasheet_departures(record, piece);
  for (const auto& d : departures) ctx.err << "warning: " << d << '\n';
  return departures;
}

devices::MeasuredPiece store_piece(store::Database& db, devices::MeasuredPiece piece) {
  if (piece.label.find_first_not_of(" \t") == std::string::npos)
    piece.label = next_piece_label(db.pieces(), piece.device);
  db.add_piece(piece);
  if (auto stored = db.piece(piece.label)) return *stored;
  return piece;
}

std::string stored_piece_text(const devices::MeasuredPiece& p) {
  std::string figures;
  if (p.idss_a) figures += fmt::format("IDSS {}, ", quantity_text(*p.idss_a, units::Unit::ampere));
  if (p.vp_v) figures += fmt::format("VP {}, ", quantity_text(*p.vp_v, units::Unit::volt));
  if (p.hfe) figures += fmt::format("hFE {:g}, ", *p.hfe);
  return fmt::format(
      "Stored piece {} of {}: {}uncertainty ±{:g}%.\n"
      "Design for this piece with `shelfstage design ... --piece {}`.\n",
      p.label, p.device, figures, p.uncertainty * 100.0, p.label);
}

}  // namespace shelfstage::cli
