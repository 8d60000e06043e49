// Designs kept in the database: saved with the request that made them, found by id.
#include "shelfstage/store/designs.hpp"

#include <fmt/format.h>

#include "shelfstage/error.hpp"
#include "shelfstage/store/detail/sqlite.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::store {

void save_designs(Database& db, const std::vector<SavedDesign>& designs) {
  auto& impl = db.impl();
  impl.immediate([&] {
    for (const auto& d : designs) {
      impl.conn
          .prepare(
              "INSERT INTO designs (id, created, spec_json, candidate_json) VALUES (?, ?, ?, ?) "
              "ON CONFLICT(id) DO UPDATE SET spec_json = excluded.spec_json, candidate_json = excluded.candidate_json")
          .bind_all(d.id, d.created.empty() ? detail::utc_now() : d.created, d.spec_json, d.candidate_json)
          .run();
    }
  });
}

std::vector<SavedDesign> all_designs(const Database& db) {
  std::vector<SavedDesign> out;
  auto st = db.impl().conn.prepare("SELECT id, created, spec_json, candidate_json FROM designs ORDER BY id");
  while (st.step()) out.push_back({st.text(0), st.text(1), st.text(2), st.text(3)});
  return out;
}

SavedDesign load_design(const Database& db, std::string_view id) {
  const auto& impl = db.impl();
  if (id.empty()) throw InputError("design id is empty");
  const std::string key(id);
  std::vector<SavedDesign> found;
  auto st = impl.conn.prepare(
      "SELECT id, created, spec_json, candidate_json FROM designs WHERE id = ?1 "
      "OR (length(?1) >= 4 AND substr(id, 1, length(?1)) = ?1) ORDER BY id = ?1 DESC LIMIT 2");
  st.bind(1, key);
  while (st.step()) found.push_back({st.text(0), st.text(1), st.text(2), st.text(3)});
  if (found.empty())
    throw InputError(
        fmt::format("design '{}' is not in this database (run `shelfstage design` first)", units::clip(key)));
  if (found.size() > 1 && found[0].id != key)
    throw InputError(
        fmt::format("design '{}' is ambiguous: it starts {} and {}", units::clip(key), found[0].id, found[1].id));
  return found.front();
}

}  // namespace shelfstage::store
