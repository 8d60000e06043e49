// Writes a Circuit as a standard SPICE netlist (ngspice runs it unchanged).
#pragma once
#include <string>
#include <vector>

#include "shelfstage/circuit/netlist.hpp"

namespace shelfstage::circuit {

struct SpiceOptions {
  std::string title = "shelfstage stage";
  double celsius = devices::kNominalCelsius;  ///< written as .options TEMP and TNOM
  /// Analysis and control lines placed before .end (".op", ".ac dec 20 1 1e8", a .control
  /// block ...). Empty: the netlist only.
  std::vector<std::string> analyses;
  /// Transient source for the signal source instead of pure AC: "SIN(0 0.1 1k)".
  std::string signal_transient;
};

/// The netlist: a title line, one line per element with SPICE-legal names (R/C/V/J/Q/I/G/E/D
/// prefixes added where a designator lacks them), one .model per transistor
/// (NJF/PJF: VTO BETA LAMBDA CGS CGD; NPN/PNP: IS BF BR VAF CJE CJC) and per diode
/// (D: IS N), .options, analyses, .end. Current sources as `I+ - DC x [AC y]` (the signal
/// transient goes on the voltage source only), controlled sources as `G|E out+ out- ctrl+ ctrl-
/// value`.
std::string to_spice(const Circuit& circuit, const SpiceOptions& options = {});

/// The SPICE name of a net (ground "0"; other names with characters outside [A-Za-z0-9_]
/// replaced by '_').
std::string spice_net(const Circuit& circuit, std::size_t net);

/// The SPICE element name written for a designator (e.g. "RD" stays "RD", "Q1" for a JFET
/// becomes "JQ1", "VDD" stays "VDD", "IB1" stays "IB1", "A1" for a VCVS becomes "EA1").
std::string spice_name(const Component& c);

}  // namespace shelfstage::circuit
