// The context every command shares: where the database is, the output streams, and whether the
// command has changed the database yet.
#include <ostream>

#include "commands.hpp"
#include "shelfstage/units/text.hpp"

namespace shelfstage::cli {

namespace {

/// Every string (and key) of the document made clean text (units::escape_text); the rest as is.
nlohmann::ordered_json clean(const nlohmann::ordered_json& doc) {
  if (doc.is_string()) {
    const auto& s = doc.get_ref<const std::string&>();
    return units::find_text_fault(s) ? nlohmann::ordered_json(units::escape_text(s)) : doc;
  }
  if (doc.is_array()) {
    nlohmann::ordered_json out = nlohmann::ordered_json::array();
    for (const auto& item : doc) out.push_back(clean(item));
    return out;
  }
  if (doc.is_object()) {
    nlohmann::ordered_json out = nlohmann::ordered_json::object();
    for (auto it = doc.begin(); it != doc.end(); ++it) out[units::escape_text(it.key())] = clean(it.value());
    return out;
  }
  return doc;
}

}  // namespace

std::filesystem::path Context::database_path() const {
  if (!global.db.empty()) return global.db;
  return store::default_database_path();
}

store::Database Context::open_database() {
  auto db = store::Database::open(database_path());
  db.on_commit([this] { database_changed = true; });
  return db;
}

store::Database Context::create_database(const std::filesystem::path& path) {
  auto db = store::Database::create(path);
  database_changed = true;  // the file itself is the change
  db.on_commit([this] { database_changed = true; });
  return db;
}

void print_json(Context& ctx, const nlohmann::ordered_json& doc) {
  // The replace handler is a second guard: clean() leaves nothing for it to replace.
  ctx.out << clean(doc).dump(2, ' ', false, nlohmann::ordered_json::error_handler_t::replace) << '\n';
}

}  // namespace shelfstage::cli
