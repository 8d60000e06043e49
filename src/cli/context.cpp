// The context every command shares: where the database is, and the output streams.
#include <ostream>

#include "commands.hpp"

namespace shelfstage::cli {

std::filesystem::path Context::database_path() const {
  if (!global.db.empty()) return global.db;
  return store::default_database_path();
}

store::Database Context::open_database() const { return store::Database::open(database_path()); }

void print_json(Context& ctx, const nlohmann::ordered_json& doc) { ctx.out << doc.dump(2) << '\n'; }

}  // namespace shelfstage::cli
