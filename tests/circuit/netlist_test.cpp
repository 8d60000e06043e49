// Tests of src/circuit/netlist.cpp: building a circuit graph and validating it before solving
// (the conditions SPICE itself refuses: a node without a DC path to ground, no ground at all,
// a loop of voltage sources), with messages that name the node or part.
#include "shelfstage/circuit/netlist.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <limits>
#include <string>
#include <utility>

#include "shelfstage/error.hpp"

using namespace shelfstage;
using circuit::Circuit;

namespace {

devices::JfetInstance some_jfet() {
  devices::JfetInstance q;
  q.idss_a = 4e-3;
  q.vp_abs_v = 2.0;
  return q;
}

// The message validate() throws, or "" when it accepts the circuit.
std::string validation_message(const Circuit& c) {
  try {
    c.validate();
  } catch (const InputError& e) {
    return e.what();
  }
  return "";
}

bool has(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

// Checks that validate() refuses the circuit with a message holding every one of `parts`.
void check_refused(const Circuit& c, std::initializer_list<std::string> parts) {
  const std::string m = validation_message(c);
  CAPTURE(m);
  for (const auto& part : parts) CHECK(has(m, part));
}

}  // namespace

TEST_CASE("Nets: ground is net 0 and answers to 0, gnd and GND; names are kept") {
  Circuit c;
  CHECK(c.net("0") == 0);
  CHECK(c.net("gnd") == 0);
  CHECK(c.net("GND") == 0);
  const auto a = c.net("drain");
  CHECK(a != 0);
  CHECK(c.net("drain") == a);
  CHECK(c.net_name(a) == "drain");
  CHECK(c.find_net("drain") == a);
  CHECK_FALSE(c.find_net("nowhere").has_value());
  CHECK(c.net_count() == 2);
}

TEST_CASE("A complete JFET stage validates; a transistor is one element with three pins") {
  Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", 12);
  c.resistor("RD", "RD", "vdd", "drain", 4.7e3);
  c.resistor("RS", "RS1", "source", "0", 1e3);
  c.resistor("RG", "RG", "gate", "0", 1e6);
  c.jfet("Q1", "drain", "gate", "source", some_jfet());
  CHECK(validation_message(c).empty());
  REQUIRE(c.elements().size() == 5);
  const auto* q = c.find("Q1");
  REQUIRE(q != nullptr);
  CHECK(q->pin_count() == 3);
  CHECK(c.net_name(q->c.pins[0]) == "drain");
  CHECK(c.net_name(q->c.pins[1]) == "gate");
  CHECK(c.net_name(q->c.pins[2]) == "source");
  CHECK(c.jfets().size() == 1);
  // The graph holds two edges for it (channel and gate pair).
  CHECK(c.edges().size() == 6);
  c.set_value("RD", 2.2e3);
  CHECK(c.find("RD")->c.value == 2.2e3);
  CHECK_THROWS_AS(c.set_value("R99", 1.0), InputError);
}

TEST_CASE("Validation rejects a floating gate and names the net and the transistor (SPICE: no DC path to ground)") {
  Circuit c;
  c.vsource("VDD", "supply", "vdd", "0", 12);
  c.vsource("VSIG", "signal", "sig", "0", 0, 1);
  c.capacitor("CIN", "CIN", "gate", "sig", 1e-6);  // a capacitor alone: no DC path
  c.resistor("RD", "RD", "vdd", "drain", 4.7e3);
  c.resistor("RS", "RS1", "source", "0", 1e3);
  c.jfet("Q1", "drain", "gate", "source", some_jfet());
  const std::string m = validation_message(c);
  CAPTURE(m);
  CHECK(has(m, "'gate'"));
  CHECK(has(m, "no DC path to ground"));
  CHECK(has(m, "floating gate of Q1"));
  // RG to ground fixes it.
  c.resistor("RG", "RG", "gate", "0", 1e6);
  CHECK(validation_message(c).empty());
}

TEST_CASE("Validation rejects a floating BJT base and a net hanging on a capacitor") {
  devices::BjtInstance b;
  Circuit c;
  c.vsource("VCC", "supply", "vcc", "0", 12);
  c.resistor("RC", "RC", "vcc", "col", 4.7e3);
  c.capacitor("CB", "CIN", "base", "0", 1e-6);
  c.bjt("Q2", "col", "base", "0", b);
  const std::string m = validation_message(c);
  CAPTURE(m);
  CHECK(has(m, "'base'"));
  CHECK(has(m, "floating base of Q2"));

  Circuit d;
  d.vsource("V1", "supply", "a", "0", 5);
  d.resistor("R1", "load", "a", "0", 1e3);
  d.capacitor("C1", "CIN", "a", "island", 1e-6);
  const std::string m2 = validation_message(d);
  CAPTURE(m2);
  CHECK(has(m2, "'island'"));
}

TEST_CASE("Validation rejects a circuit without ground and names net 0") {
  Circuit c;
  c.vsource("V1", "supply", "a", "b", 5);
  c.resistor("R1", "load", "a", "b", 1e3);
  const std::string m = validation_message(c);
  CAPTURE(m);
  CHECK(has(m, "no ground"));
  CHECK(has(m, "'0'"));
}

TEST_CASE("Validation rejects a loop of voltage sources and names the source and the net") {
  Circuit c;
  c.vsource("V1", "supply", "rail", "0", 12);
  c.vsource("V2", "supply", "rail", "0", 9);
  c.resistor("R1", "load", "rail", "0", 1e3);
  const std::string m = validation_message(c);
  CAPTURE(m);
  CHECK(has(m, "loop of voltage sources"));
  CHECK(has(m, "V2"));
  CHECK(has(m, "'rail'"));
  // A longer loop: V1 + V3 + V4 around three nets.
  Circuit d;
  d.vsource("V1", "supply", "a", "0", 1);
  d.vsource("V3", "supply", "b", "a", 1);
  d.vsource("V4", "supply", "b", "0", 2);
  d.resistor("R1", "load", "b", "0", 1e3);
  const std::string m2 = validation_message(d);
  CAPTURE(m2);
  CHECK(has(m2, "V4"));
  CHECK(has(m2, "loop of voltage sources"));
}

TEST_CASE("Validation rejects shorted parts and values that are not finite and positive, naming the part") {
  {
    Circuit c;
    c.vsource("V1", "supply", "a", "0", 5);
    c.resistor("R7", "RD", "a", "a", 1e3);
    const std::string m = validation_message(c);
    CHECK(has(m, "R7"));
    CHECK(has(m, "both ends on net 'a'"));
  }
  for (double bad : {0.0, -4.7e3, std::nan(""), std::numeric_limits<double>::infinity()}) {
    CAPTURE(bad);
    Circuit c;
    c.vsource("V1", "supply", "a", "0", 5);
    c.resistor("R3", "RS1", "a", "0", bad);
    const std::string m = validation_message(c);
    CHECK(has(m, "R3 (RS1)"));
  }
  Circuit c;
  c.vsource("V1", "supply", "a", "0", std::nan(""));
  c.resistor("R1", "load", "a", "0", 1e3);
  CHECK(has(validation_message(c), "V1"));
}

TEST_CASE("Macro-model elements in the graph: a current source or a VCCS output gives no DC path, a VCVS output does") {
  // A net fed by a current source alone floats, and the message names the source.
  Circuit f;
  f.isource("I1", "bias", "0", "a", 1e-3);
  check_refused(f, {"'a'", "no DC path to ground", "current source I1"});
  f.resistor("R1", "R", "a", "0", 1e3);
  CHECK(validation_message(f).empty());
  // A VCCS's output alone: floating; a VCVS's output: held.
  for (const bool voltage : {false, true}) {
    CAPTURE(voltage);
    Circuit c;
    c.vsource("V1", "signal", "in", "0", 1.0);
    if (voltage)
      c.vcvs("E1", "gain", "o", "0", "in", "0", 2.0);
    else
      c.vccs("G1", "gain", "o", "0", "in", "0", 1e-3);
    if (voltage)
      CHECK(validation_message(c).empty());
    else
      check_refused(c, {"'o'", "current source G1"});
    // Four pins, two edges (output pair and control pair) for one element.
    const auto* e = c.find(voltage ? "E1" : "G1");
    REQUIRE(e != nullptr);
    CHECK(e->pin_count() == 4);
    CHECK(c.net_name(e->c.pins[0]) == "o");
    CHECK(c.net_name(e->c.pins[2]) == "in");
    CHECK(c.edges().size() == 3);
    CHECK(c.elements().size() == 2);
  }
}

TEST_CASE("Macro-model elements in the graph: a control pair draws no current and gives no path; a diode does") {
  // The control input of a VCCS on a net of its own: floating, named as such.
  Circuit c;
  c.vsource("V1", "supply", "a", "0", 5);
  c.resistor("R1", "R", "a", "o", 1e3);
  c.vccs("G1", "gain", "o", "0", "ctl", "0", 1e-3);
  check_refused(c, {"'ctl'", "control input of G1"});
  // A control pair does not join its nets to the output's: a resistor across a VCVS's
  // control pair floats although the output is grounded.
  Circuit d;
  d.resistor("R1", "R", "b", "c", 1e3);
  d.vcvs("E1", "gain", "o", "0", "b", "c", 1.0);
  d.resistor("RL", "load", "o", "0", 1e3);
  check_refused(d, {"no DC path to ground", "control input of E1"});
  // A diode to a source is a DC path (gmin holds it when reverse biased).
  Circuit e;
  e.vsource("V1", "clamp", "k", "0", 5);
  e.isource("I1", "bias", "0", "a", 1e-3);
  e.diode("D1", "clamp", "a", "k", 1e-14, 1);
  CHECK(validation_message(e).empty());
  REQUIRE(e.diodes().size() == 1);
  CHECK(e.find("D1")->c.device == 0);
}

TEST_CASE("Validation of macro-model elements: VCVS in a loop of voltage sources, shorted pins, bad diode figures") {
  auto supplied = [] {
    Circuit c;
    c.vsource("V1", "supply", "a", "0", 5);
    return c;
  };
  Circuit loop = supplied();
  loop.vcvs("E1", "gain", "a", "0", "a", "0", 1.0);
  check_refused(loop, {"loop of voltage sources", "E1"});
  Circuit control = supplied();
  control.resistor("R1", "load", "a", "o", 1e3);
  control.vccs("G1", "gain", "o", "0", "a", "a", 1e-3);
  check_refused(control, {"G1 (gain): both control pins on net 'a'"});
  Circuit output = supplied();
  output.vccs("G1", "gain", "a", "a", "a", "0", 1e-3);
  check_refused(output, {"G1 (gain): both ends on net 'a'"});
  for (const auto& [is, n] : {std::pair{0.0, 1.0}, std::pair{1e-14, -1.0}, std::pair{1e-14, std::nan("")}}) {
    CAPTURE(is);
    CAPTURE(n);
    Circuit c = supplied();
    c.diode("D7", "clamp", "a", "0", is, n);
    check_refused(c, {"D7 (clamp): IS"});
  }
  Circuit c = supplied();
  c.resistor("R1", "load", "a", "0", 1e3);
  c.isource("I1", "bias", "a", "0", std::numeric_limits<double>::infinity());
  check_refused(c, {"I1 (bias): value is not a finite number"});
  // Negative transconductance and gain are allowed (an inverting stage).
  Circuit g = supplied();
  g.vcvs("E1", "gain", "o", "0", "a", "0", -3.0);
  g.vccs("G1", "gain", "o", "0", "a", "0", -1e-3);
  CHECK(validation_message(g).empty());
}
