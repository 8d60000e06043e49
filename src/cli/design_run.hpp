// The design request as typed on the command line, and running it against a database:
// shared by `design` and `demo`.
#pragma once
#include <optional>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "commands.hpp"
#include "shelfstage/synth/design.hpp"

namespace shelfstage::cli {

/// The options of `design`, as text until parsed (so errors can quote what was typed).
struct DesignOptions {
  std::string gain, load, supply, zin;
  std::string source_z = "0";
  std::optional<std::string> band, swing, max_current, temp, piece, load_cap;
  int copies = 1;
  std::vector<std::string> topologies, devices;
  int top = 5;
  int combine = 2;
  std::string gain_tol = "10%";
  std::uint64_t seed = 1;
  int samples = 500;
  std::string stages = "1..3";              ///< --stages: depth of chains, "1", "2..3", "1..3"
  std::string spread = "correlated";        ///< --spread: correlated or box
  std::string max_distortion = "1%";        ///< --max-distortion: THD bound
  std::optional<std::string> phase_margin;  ///< --phase-margin: a feedback loop's least margin, degrees
  std::string prefer = "accuracy";          ///< --prefer: accuracy or distortion
  bool no_save = false;
  bool split = false;  ///< --split: the supply is +V and -V with ground between
};

/// Binds the design options to a (sub)command.
void bind_design_options(CLI::App& cmd, DesignOptions& o);

/// Reads the typed request into a Spec (InputError naming the option and the text).
synth::Spec spec_from_options(const DesignOptions& o);

/// The inventory as the synthesizer reads it.
synth::Inventory load_inventory(const store::Database& db);

/// Runs the design, keeps the candidates in the database (unless no_save), and prints the
/// result (table or JSON). Returns the result; throws InfeasibleError (exit 2) after
/// printing the diagnosis when nothing fits.
synth::DesignResult run_design_on(store::Database& db, const synth::Spec& spec, bool save, Context& ctx);

}  // namespace shelfstage::cli
