// Storing a piece measured on the bench (`devices measure`, `devices fit --label`): a free
// label when none is given, the check against the datasheet, and what is said about it.
#pragma once
#include <string>
#include <string_view>
#include <vector>

#include "commands.hpp"
#include "shelfstage/devices/record.hpp"

namespace shelfstage::cli {

/// The first label "<DEVICE>-1", "<DEVICE>-2", ... that no piece uses (labels compare
/// without regard to case, as the database compares them).
std::string next_piece_label(const std::vector<devices::MeasuredPiece>& pieces, std::string_view device);

/// Prints one `warning: ...` line on ctx.err for each figure outside the datasheet range
/// (devices::datasheet_departures) and returns them.
std::vector<std::string> warn_departures(const devices::DeviceRecord& record, const devices::MeasuredPiece& piece,
                                         Context& ctx);

/// Stores the piece in one transaction, its label filled in by next_piece_label when empty,
/// and returns it as stored. Nothing is written when it is refused (InputError).
devices::MeasuredPiece store_piece(store::Database& db, devices::MeasuredPiece piece);

/// "Stored piece SJ-101-1 of SJ-101: IDSS 2.9mA, VP -1.45V, uncertainty ±3%." and how to
/// design for it.
std::string stored_piece_text(const devices::MeasuredPiece& piece);

}  // namespace shelfstage::cli
