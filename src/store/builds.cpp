// Reservations and builds of kept designs: each change one BEGIN IMMEDIATE transaction,
// quantities only through the ledger, holds only through the reservations table.
#include "shelfstage/store/builds.hpp"

#include <fmt/format.h>

#include <algorithm>

#include "shelfstage/error.hpp"
#include "shelfstage/store/detail/sqlite.hpp"

namespace shelfstage::store {

namespace {

void require_design(const Database::Impl& impl, std::string_view design_id) {
  const int n = impl.conn.prepare("SELECT count(*) FROM designs WHERE id = ?").bind(1, design_id).scalar<int>();
  if (n == 0)
    throw InputError(fmt::format("design '{}' is not in this database (run `shelfstage design` first)", design_id));
}

Held held_locked(const Database::Impl& impl, std::string_view design_id) {
  Held held;
  auto st = impl.conn.prepare("SELECT part_id, sum(qty) FROM reservations WHERE design_id = ? GROUP BY part_id");
  st.bind(1, design_id);
  while (st.step()) held[st.int64(0)] = st.int32(1);
  return held;
}

/// The plan's lines with one entry per stock line (a planner may name a line twice).
std::vector<Withdrawal> merged(const std::vector<Withdrawal>& take) {
  std::vector<Withdrawal> out;
  for (const auto& w : take) {
    if (w.qty <= 0) throw InputError(fmt::format("stock line {}: a withdrawal of {} pieces", w.part_id, w.qty));
    auto it = std::find_if(out.begin(), out.end(), [&](const Withdrawal& o) { return o.part_id == w.part_id; });
    if (it == out.end()) {
      out.push_back(w);
    } else {
      it->qty += w.qty;
      if (!w.designators.empty()) it->designators += (it->designators.empty() ? "" : ",") + w.designators;
    }
  }
  return out;
}

int release_locked(Database::Impl& impl, std::string_view design_id) {
  const int pieces = impl.conn.prepare("SELECT coalesce(sum(qty), 0) FROM reservations WHERE design_id = ?")
                         .bind(1, design_id)
                         .scalar<int>();
  impl.conn.prepare("DELETE FROM reservations WHERE design_id = ?").bind(1, design_id).run();
  return pieces;
}

/// Lowers a design's reservations on one line by n pieces (newest rows first).
void release_some(Database::Impl& impl, std::string_view design_id, std::int64_t part_id, int n) {
  auto rows =
      impl.conn.prepare("SELECT id, qty FROM reservations WHERE design_id = ? AND part_id = ? ORDER BY id DESC");
  rows.bind_all(design_id, part_id);
  std::vector<std::pair<std::int64_t, int>> found;
  while (rows.step()) found.emplace_back(rows.int64(0), rows.int32(1));
  for (const auto& [id, qty] : found) {
    if (n <= 0) break;
    const int take = std::min(n, qty);
    if (take == qty)
      impl.conn.prepare("DELETE FROM reservations WHERE id = ?").bind(1, id).run();
    else
      impl.conn.prepare("UPDATE reservations SET qty = qty - ? WHERE id = ?").bind_all(take, id).run();
    n -= take;
  }
}

std::vector<BuildLine> lines_of(const Database::Impl& impl, std::int64_t build_id) {
  std::vector<BuildLine> out;
  auto st = impl.conn.prepare("SELECT part_id, qty, designators FROM build_lines WHERE build_id = ? ORDER BY id");
  st.bind(1, build_id);
  while (st.step()) {
    BuildLine l;
    l.part_id = st.int64(0);
    l.qty = st.int32(1);
    l.designators = st.text(2);
    const auto p = impl.load_part(l.part_id);
    l.part = p ? describe(*p) : fmt::format("stock line {}", l.part_id);
    out.push_back(std::move(l));
  }
  return out;
}

constexpr const char* kBuildColumns = "id, design_id, copies, state, created, undone";

BuildRecord read_build(const detail::Statement& st) {
  BuildRecord b;
  b.id = st.int64(0);
  b.design_id = st.text(1);
  b.copies = st.int32(2);
  b.state = st.text(3);
  b.created = st.text(4);
  b.undone = st.opt_text(5);
  return b;
}

}  // namespace

std::int64_t BuildRecord::pieces() const {
  std::int64_t n = 0;
  for (const auto& l : lines) n += l.qty;
  return n;
}

Held held_for(const Database& db, std::string_view design_id) { return held_locked(db.impl(), design_id); }

std::vector<Reservation> reservations(const Database& db, std::optional<std::string_view> design_id) {
  std::vector<Reservation> out;
  auto st = db.impl().conn.prepare(
      "SELECT id, design_id, part_id, qty, created FROM reservations WHERE ?1 IS NULL OR design_id = ?1 ORDER BY id");
  st.bind(1, design_id ? std::optional<std::string>(std::string(*design_id)) : std::nullopt);
  while (st.step()) out.push_back({st.int64(0), st.opt_text(1), st.int64(2), st.int32(3), st.text(4)});
  return out;
}

int reserve_design(Database& db, std::string_view design_id, const Planner& plan) {
  auto& impl = db.impl();
  return impl.immediate([&] {
    require_design(impl, design_id);
    const int released = release_locked(impl, design_id);
    const WithdrawalPlan p = plan(db.parts(), Held{});
    if (!p.short_text.empty()) throw InfeasibleError(p.short_text);
    const auto take = merged(p.take);
    if (take.empty()) throw InputError(fmt::format("design '{}' needs no pieces to hold", design_id));
    for (const auto& w : take) impl.reserve(std::string(design_id), w.part_id, w.qty);
    return released;
  });
}

int release_design(Database& db, std::string_view design_id) {
  auto& impl = db.impl();
  return impl.immediate([&] {
    require_design(impl, design_id);
    return release_locked(impl, design_id);
  });
}

std::int64_t record_build(Database& db, std::string_view design_id, int copies, const Planner& plan) {
  if (copies <= 0) throw InputError(fmt::format("copies {} must be at least 1", copies));
  auto& impl = db.impl();
  return impl.immediate([&] {
    require_design(impl, design_id);
    const Held held = held_locked(impl, design_id);
    const WithdrawalPlan p = plan(db.parts(), held);
    if (!p.short_text.empty()) throw InfeasibleError(p.short_text);
    const auto take = merged(p.take);
    if (take.empty()) throw InputError(fmt::format("design '{}' needs no pieces to build", design_id));
    impl.conn.prepare("INSERT INTO builds (design_id, copies, state, created) VALUES (?, ?, 'built', ?)")
        .bind_all(design_id, copies, detail::utc_now())
        .run();
    const std::int64_t build_id = impl.conn.last_insert_rowid();
    const std::string reason = fmt::format("build {} of {}", build_id, design_id);
    for (const auto& w : take) {
      // The design's own held pieces go first (NOTES 3): release them, then take the pieces.
      if (const auto h = held.find(w.part_id); h != held.end())
        release_some(impl, design_id, w.part_id, std::min(h->second, w.qty));
      impl.record_change(w.part_id, -w.qty, reason, build_id);
      impl.conn.prepare("INSERT INTO build_lines (build_id, part_id, qty, designators) VALUES (?, ?, ?, ?)")
          .bind_all(build_id, w.part_id, w.qty, w.designators)
          .run();
    }
    return build_id;
  });
}

void undo_build(Database& db, std::int64_t build_id) {
  auto& impl = db.impl();
  impl.immediate([&] {
    const auto found = find_build(db, build_id);
    if (!found)
      throw InputError(fmt::format("build {} is not in this database (see `shelfstage builds list`)", build_id));
    const BuildRecord& b = *found;
    if (b.state == "undone")
      throw InputError(fmt::format("build {} of {} was already undone at {}; its pieces are back on the shelf",
                                   build_id, b.design_id, b.undone.value_or("?")));
    const std::string reason = fmt::format("undo build {}", build_id);
    for (const auto& l : b.lines) impl.record_change(l.part_id, l.qty, reason, build_id);
    impl.conn.prepare("UPDATE builds SET state = 'undone', undone = ? WHERE id = ?")
        .bind_all(detail::utc_now(), build_id)
        .run();
  });
}

std::vector<BuildRecord> builds(const Database& db) {
  // One read snapshot for the builds and their lines (the connection is not shared, so
  // starting a read transaction on it does not change what the caller may do).
  auto& impl = const_cast<Database::Impl&>(db.impl());
  return impl.snapshot([&] {
    std::vector<BuildRecord> out;
    {
      auto st = impl.conn.prepare(fmt::format("SELECT {} FROM builds ORDER BY id", kBuildColumns));
      while (st.step()) out.push_back(read_build(st));
    }
    for (auto& b : out) b.lines = lines_of(impl, b.id);
    return out;
  });
}

std::optional<BuildRecord> find_build(const Database& db, std::int64_t build_id) {
  const auto& impl = db.impl();
  std::optional<BuildRecord> found;
  {
    auto st = impl.conn.prepare(fmt::format("SELECT {} FROM builds WHERE id = ?", kBuildColumns));
    st.bind(1, build_id);
    if (!st.step()) return std::nullopt;
    found = read_build(st);
  }
  BuildRecord b = *found;
  b.lines = lines_of(impl, b.id);
  return b;
}

}  // namespace shelfstage::store
