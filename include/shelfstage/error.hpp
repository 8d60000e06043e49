// The one root error type of the library: it carries the exit status the CLI will use.
#pragma once
#include <stdexcept>
#include <string>

namespace shelfstage {

/// Exit statuses (docs/interface.md, "Exit status"; never renumbered).
enum class ExitCode : int {
  ok = 0,
  bad_input = 1,   ///< bad input or usage: names the offending field and value
  infeasible = 2,  ///< no feasible design, or not enough stock
  database = 3,    ///< database locked, corrupt, or of a newer schema
};

/// Every failure the library reports is an Error. The library never prints and never
/// exits: it throws, and the CLI prints `error: <what()>` and exits with code().
class Error : public std::runtime_error {
 public:
  Error(ExitCode code, const std::string& message) : std::runtime_error(message), code_(code) {}
  ExitCode code() const noexcept { return code_; }

 private:
  ExitCode code_;
};

/// Bad input: the message names the field and the value ("qty 'ten' is not a whole number").
struct InputError : Error {
  explicit InputError(const std::string& message) : Error(ExitCode::bad_input, message) {}
};
/// A sound request that cannot be met: no design fits, or the stock is short.
struct InfeasibleError : Error {
  explicit InfeasibleError(const std::string& message) : Error(ExitCode::infeasible, message) {}
};
/// The database is locked, corrupt, or from a newer schema version.
struct DatabaseError : Error {
  explicit DatabaseError(const std::string& message) : Error(ExitCode::database, message) {}
};

}  // namespace shelfstage
