// SPICE netlist writer: the exact instance parameters of every part, so ngspice checks us fairly.
#include "shelfstage/circuit/spice.hpp"

#include <cctype>
#include <cmath>
#include <fmt/format.h>

namespace shelfstage::circuit {

std::string spice_net(const Circuit& c, std::size_t net) {
  if (net == 0) return "0";
  std::string s = c.net_name(net);
  for (char& ch : s)
    if (!std::isalnum(static_cast<unsigned char>(ch)) && ch != '_') ch = '_';
  return s;
}

std::string spice_name(const Component& c) {
  char prefix = 'R';
  switch (c.kind) {
    case ElementKind::resistor: prefix = 'R'; break;
    case ElementKind::capacitor: prefix = 'C'; break;
    case ElementKind::vsource: prefix = 'V'; break;
    case ElementKind::jfet: prefix = 'J'; break;
    case ElementKind::bjt: prefix = 'Q'; break;
    case ElementKind::isource: prefix = 'I'; break;
    case ElementKind::vccs: prefix = 'G'; break;
    case ElementKind::vcvs: prefix = 'E'; break;
    case ElementKind::diode: prefix = 'D'; break;
  }
  std::string name = c.designator;
  for (char& ch : name)
    if (!std::isalnum(static_cast<unsigned char>(ch)) && ch != '_') ch = '_';
  if (name.empty() || std::toupper(static_cast<unsigned char>(name[0])) != prefix) name = std::string(1, prefix) + name;
  return name;
}

std::string to_spice(const Circuit& c, const SpiceOptions& o) {
  std::string out = fmt::format("* {}\n", o.title);
  std::string models;
  for (const auto& el : c.elements()) {
    const Component& e = el.c;
    const std::string name = spice_name(e);
    const std::string a = spice_net(c, e.pins[0]), b = spice_net(c, e.pins[1]);
    switch (e.kind) {
      case ElementKind::resistor:
      case ElementKind::capacitor:
        out += fmt::format("{} {} {} {:.10g}{}\n", name, a, b, e.value, e.noiseless ? " noisy=0" : "");
        break;
      case ElementKind::vsource:
        if (e.ac_volts != 0 && !o.signal_transient.empty())
          out +=
              fmt::format("{} {} {} DC {:.10g} AC {:.10g} {}\n", name, a, b, e.value, e.ac_volts, o.signal_transient);
        else if (e.ac_volts != 0)
          out += fmt::format("{} {} {} DC {:.10g} AC {:.10g}\n", name, a, b, e.value, e.ac_volts);
        else
          out += fmt::format("{} {} {} DC {:.10g}\n", name, a, b, e.value);
        break;
      case ElementKind::jfet: {
        const auto& q = c.jfets()[e.device];
        const std::string model = "M" + name;
        out += fmt::format("{} {} {} {} {}\n", name, a, b, spice_net(c, e.pins[2]), model);
        // SPICE gives a depletion JFET a negative VTO for both channel types.
        models += fmt::format(".model {} {}(VTO={:.10g} BETA={:.10g} LAMBDA={:.10g} CGS={:.10g} CGD={:.10g})\n", model,
                              q.kind == devices::DeviceKind::pjfet ? "PJF" : "NJF", -q.vp_abs_v, q.beta(),
                              q.lambda_per_v, q.cgs_f, q.cgd_f);
        break;
      }
      case ElementKind::bjt: {
        const auto& q = c.bjts()[e.device];
        const std::string model = "M" + name;
        out += fmt::format("{} {} {} {} {}\n", name, a, b, spice_net(c, e.pins[2]), model);
        const bool early = q.vaf_v > 0 && std::isfinite(q.vaf_v);
        models += fmt::format(".model {} {}(IS={:.10g} BF={:.10g} BR={:.10g}{} CJE={:.10g} CJC={:.10g})\n", model,
                              q.kind == devices::DeviceKind::pnp ? "PNP" : "NPN", q.is_a, q.bf, q.br,
                              early ? fmt::format(" VAF={:.10g}", q.vaf_v) : std::string(), q.cje_f, q.cjc_f);
        break;
      }
      case ElementKind::isource:
        if (e.ac_volts != 0)
          out += fmt::format("{} {} {} DC {:.10g} AC {:.10g}\n", name, a, b, e.value, e.ac_volts);
        else
          out += fmt::format("{} {} {} DC {:.10g}\n", name, a, b, e.value);
        break;
      case ElementKind::vccs:
      case ElementKind::vcvs:
        out += fmt::format("{} {} {} {} {} {:.10g}\n", name, a, b, spice_net(c, e.pins[2]), spice_net(c, e.pins[3]),
                           e.value);
        break;
      case ElementKind::diode: {
        const DiodeModel& d = c.diodes()[e.device];
        const std::string model = "M" + name;
        out += fmt::format("{} {} {} {}\n", name, a, b, model);
        models += fmt::format(".model {} D(IS={:.10g} N={:.10g})\n", model, d.is_a, d.n);
        break;
      }
    }
  }
  out += models;
  out += fmt::format(".options TEMP={:g} TNOM={:g}\n", o.celsius, o.celsius);
  for (const auto& line : o.analyses) out += line + "\n";
  out += ".end\n";
  return out;
}

}  // namespace shelfstage::circuit
