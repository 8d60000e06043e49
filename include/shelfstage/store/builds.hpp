// Builds and reservations of kept designs: pieces held for a planned build, pieces taken out
// of stock by a build (ledgered, recorded with the build), and a build undone.
//
// The store does not know what a design needs: a Planner, called inside the write
// transaction with the stock as it is at that moment, says which stock lines to take from.
// Planning under the write lock is what makes two builds racing for the last pieces safe:
// the second one plans against the stock the first one left.
//
// NOTES (invariants kept here, on top of store/detail/sqlite.hpp's):
//  1. A build row in state `built` has one build_lines row per stock line it took from, and
//     for each a ledger entry of -qty with build_id set; the pieces are gone from parts.qty.
//  2. Undoing writes +qty ledger entries (build_id set, reason "undo build N") for every
//     build line and sets state `undone`; an undone build is never undone again.
//  3. A reservation of a design holds pieces on named lines; a build of that design uses its
//     held pieces first and releases exactly those it took; an undo does not hold them again.
//  4. Every function below that writes runs in one BEGIN IMMEDIATE transaction: a failure
//     (short stock, a locked file, a crash) leaves the database as it was.
//
//   reserve ---> held ---build---> built ---undo---> undone
//     ^  |                 ^
//     |  release           build (no reservation)
#pragma once
#include <cstdint>
#include <functional>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "shelfstage/store/database.hpp"

namespace shelfstage::store {

/// Pieces to take from (or hold on) one stock line.
struct Withdrawal {
  std::int64_t part_id = 0;
  int qty = 0;              ///< > 0, pieces for all copies
  std::string designators;  ///< where they go: "R1,R3.2" (kept with the build line)
};

/// What a planner decided: the lines to take from, or why it cannot be done.
struct WithdrawalPlan {
  std::vector<Withdrawal> take;
  std::string short_text;  ///< not empty: what is short, for people; nothing is written
};

/// Pieces held for one design, by stock line id.
using Held = std::map<std::int64_t, int>;

/// Plans a withdrawal from the stock as it is now (Database::parts() inside the transaction)
/// and the pieces the design's own reservations hold on each line.
using Planner = std::function<WithdrawalPlan(const std::vector<Part>& stock, const Held& held)>;

/// One line of a build: pieces taken from one stock line.
struct BuildLine {
  std::int64_t part_id = 0;
  int qty = 0;
  std::string designators;
  std::string part;  ///< describe() of the stock line now: "R 10k 5% 0.25W bin A7"
};

/// A build as `builds list` shows it.
struct BuildRecord {
  std::int64_t id = 0;
  std::string design_id;
  int copies = 0;
  std::string state;                  ///< "built" or "undone"
  std::string created;                ///< ISO 8601 UTC
  std::optional<std::string> undone;  ///< ISO 8601 UTC when undone
  std::vector<BuildLine> lines;
  std::int64_t pieces() const;  ///< pieces taken, all lines (64 bits: each line may hold up to INT_MAX)
};

/// One reservation row.
struct Reservation {
  std::int64_t id = 0;
  std::optional<std::string> design_id;  ///< nullopt: held outside any design
  std::int64_t part_id = 0;
  int qty = 0;
  std::string created;
};

/// The pieces the reservations of a design hold, by line (empty when none).
Held held_for(const Database& db, std::string_view design_id);

/// Every reservation, or those of one design, in order of id.
std::vector<Reservation> reservations(const Database& db, std::optional<std::string_view> design_id = std::nullopt);

/// Holds pieces for a planned build of a kept design, in one transaction: the design's
/// earlier reservations are released first (so the plan sees their pieces as available and
/// the new hold replaces them), then plan(stock, {}) is held line by line. A plan with
/// short_text, or a line that cannot hold its pieces, throws InfeasibleError and changes
/// nothing (the old reservation stays). InputError for an unknown design or an empty plan.
/// Returns the pieces released from the earlier reservations.
int reserve_design(Database& db, std::string_view design_id, const Planner& plan);

/// Releases every reservation of a design in one transaction; returns the pieces released
/// (0 when none were held). InputError for an unknown design.
int release_design(Database& db, std::string_view design_id);

/// Builds `copies` copies of a kept design in one transaction: plan(stock, held) with the
/// pieces the design holds; each line's held pieces are released as far as they are taken;
/// each line gets a ledger entry of -qty with `reason` "build N of DESIGN"; the build and
/// its lines are recorded. InfeasibleError (the plan's short_text, or a line short when it
/// is taken) and nothing written when anything is short. Returns the build id.
std::int64_t record_build(Database& db, std::string_view design_id, int copies, const Planner& plan);

/// Puts every piece of a build back on the lines it came from (ledger "undo build N"), and
/// marks it undone, in one transaction. InputError for an unknown build, or one already
/// undone (the message says when).
void undo_build(Database& db, std::int64_t build_id);

/// Every build, oldest first, with its lines.
std::vector<BuildRecord> builds(const Database& db);
/// One build with its lines, or nullopt.
std::optional<BuildRecord> find_build(const Database& db, std::int64_t build_id);

}  // namespace shelfstage::store
