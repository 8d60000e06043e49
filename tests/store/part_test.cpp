// Tests of the stock line basics: kind codes, field checks, polarity, descriptions.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>

#include "shelfstage/store/part.hpp"

using namespace shelfstage;
using store::Part;
using store::PartKind;

namespace {

bool mentions(const std::vector<std::string>& problems, std::string_view text) {
  return std::any_of(problems.begin(), problems.end(),
                     [&](const std::string& p) { return p.find(text) != std::string::npos; });
}

Part resistor(double ohms, int qty) {
  Part p;
  p.kind = PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  return p;
}

}  // namespace

TEST_CASE("kind codes: the six codes of docs/interface.md, both ways, any case") {
  for (auto k :
       {PartKind::resistor, PartKind::capacitor, PartKind::njfet, PartKind::pjfet, PartKind::npn, PartKind::pnp}) {
    PartKind back = PartKind::resistor;
    REQUIRE(store::parse_kind_code(store::kind_code(k), back));
    CHECK(back == k);
  }
  CHECK(store::kind_code(PartKind::njfet) == "NJFET");
  PartKind k{};
  CHECK(store::parse_kind_code(" npn ", k));
  CHECK(k == PartKind::npn);
  CHECK(store::parse_kind_code("c", k));
  CHECK(k == PartKind::capacitor);
  CHECK_FALSE(store::parse_kind_code("Q", k));
  CHECK_FALSE(store::parse_kind_code("", k));
  CHECK_FALSE(store::parse_kind_code("RR", k));
  CHECK_FALSE(store::parse_kind_code("JFET", k));
}

TEST_CASE("kind codes map to the transistor kinds and back") {
  devices::DeviceKind d{};
  CHECK_FALSE(store::device_kind(PartKind::resistor, d));
  CHECK_FALSE(store::device_kind(PartKind::capacitor, d));
  for (auto dk :
       {devices::DeviceKind::njfet, devices::DeviceKind::pjfet, devices::DeviceKind::npn, devices::DeviceKind::pnp}) {
    REQUIRE(store::device_kind(store::part_kind(dk), d));
    CHECK(d == dk);
  }
}

TEST_CASE("polarised: electrolytic and tantalum capacitors are; bipolar ones and ceramics are not") {
  // Common practice (docs/physics.md, Parts): aluminium electrolytics and tantalums are polarised;
  // bipolar ("NP") electrolytics are made for AC.
  Part c;
  c.kind = PartKind::capacitor;
  c.value = 100e-6;
  for (const char* d : {"electrolytic", "Electrolytic", "aluminium electrolytic", "tantalum", "Tantalum bead"}) {
    c.dielectric = d;
    CHECK_MESSAGE(c.polarised(), d);
  }
  for (const char* d :
       {"", "C0G", "X7R", "film", "bipolar electrolytic", "electrolytic NP", "non-polar electrolytic"}) {
    c.dielectric = d;
    CHECK_MESSAGE(!c.polarised(), d);
  }
  Part r = resistor(1000, 1);
  r.dielectric = "electrolytic";
  CHECK_FALSE(r.polarised());
}

TEST_CASE("part_problems: a sound resistor, capacitor and transistor pass") {
  Part r = resistor(4700, 10);
  r.tol = units::Tolerance{0.05, 0.05};
  r.power_w = 0.25;
  r.reserved = 10;
  CHECK(store::part_problems(r).empty());

  Part c;
  c.kind = PartKind::capacitor;
  c.value = 100e-9;
  c.volts = 50;
  c.dielectric = "X7R";
  c.tol = units::Tolerance{0.2, 0.8};
  CHECK(store::part_problems(c).empty());

  Part q;
  q.kind = PartKind::npn;
  q.device = "SQ-410";
  q.qty = 3;
  CHECK(store::part_problems(q).empty());
}

TEST_CASE("part_problems names the field and the value") {
  CHECK(mentions(store::part_problems(resistor(0, 1)), "value 0 must be above zero"));
  CHECK(mentions(store::part_problems(resistor(-10, 1)), "value -10"));
  CHECK(mentions(store::part_problems(resistor(std::numeric_limits<double>::quiet_NaN(), 1)), "value nan"));
  CHECK(mentions(store::part_problems(resistor(100, -3)), "qty -3 is negative"));

  Part r = resistor(100, 2);
  r.reserved = 3;
  CHECK(mentions(store::part_problems(r), "reserved 3 is more than qty 2"));
  r.reserved = -1;
  CHECK(mentions(store::part_problems(r), "reserved -1 is negative"));

  r = resistor(100, 2);
  r.power_w = 0;
  CHECK(mentions(store::part_problems(r), "power 0 must be above zero"));
  r.power_w.reset();
  r.volts = 50;
  CHECK(mentions(store::part_problems(r), "volts 50 given for kind R"));
  r.volts.reset();
  r.dielectric = "X7R";
  CHECK(mentions(store::part_problems(r), "dielectric 'X7R'"));
  r.dielectric.clear();
  r.tol = units::Tolerance{1.0, 0.05};
  CHECK(mentions(store::part_problems(r), "tol"));
  r.tol = units::Tolerance{0.05, -0.05};
  CHECK(mentions(store::part_problems(r), "tol"));
  r.tol.reset();
  r.device = "SQ-410";
  CHECK(mentions(store::part_problems(r), "device 'SQ-410' given for kind R"));

  Part c;
  c.kind = PartKind::capacitor;
  c.value = 4.7;  // a tired "4.7" meant as 4.7u
  c.qty = 1;
  CHECK(mentions(store::part_problems(c), "write e.g. 4.7u"));
  c.value = 4.7e-6;
  c.volts = -16;
  CHECK(mentions(store::part_problems(c), "volts -16 must be above zero"));
  c.volts.reset();
  c.power_w = 0.25;
  CHECK(mentions(store::part_problems(c), "power 0.25 given for kind C"));

  Part q;
  q.kind = PartKind::pnp;
  q.qty = 1;
  CHECK(mentions(store::part_problems(q), "device is missing"));
  q.device = "SQ-510";
  q.value = 1;
  CHECK(mentions(store::part_problems(q), "value 1 given for kind PNP"));
}

namespace {

devices::DeviceRecord njfet() {
  devices::DeviceRecord d;
  d.name = "SJ-101";
  d.kind = devices::DeviceKind::njfet;
  d.jfet.idss_a = {1e-3, 5e-3, 2.5e-3};
  d.jfet.vp_v = {-3.0, -0.5, -1.4};
  d.jfet.lambda_per_v = 0.005;
  d.jfet.cgs_f = 4.5e-12;
  d.jfet.cgd_f = 1.5e-12;
  return d;
}

devices::DeviceRecord npn() {
  devices::DeviceRecord d;
  d.name = "SQ-410";
  d.kind = devices::DeviceKind::npn;
  d.bjt.hfe = {110, 450, 250};
  d.bjt.is_a = 1.5e-14;
  d.bjt.vaf_v = 80;
  return d;
}

}  // namespace

TEST_CASE("device_problems: VGS(off) sign follows the channel, ranges are ordered") {
  // Datasheet convention (docs/physics.md, Signs): VGS(off) < 0 for N-channel, > 0 for P-channel.
  CHECK(store::device_problems(njfet()).empty());
  CHECK(store::device_problems(npn()).empty());

  auto d = njfet();
  d.jfet.vp_v = {0.5, 3.0, std::nullopt};
  CHECK(mentions(store::device_problems(d), "vp_min 0.5 must be negative for an N-channel JFET"));
  d.kind = devices::DeviceKind::pjfet;
  CHECK(store::device_problems(d).empty());

  d = njfet();
  d.jfet.idss_a = {5e-3, 1e-3, std::nullopt};
  CHECK(mentions(store::device_problems(d), "idss_min 0.005 is above idss_max 0.001"));
  d = njfet();
  d.jfet.idss_a.typ = 9e-3;
  CHECK(mentions(store::device_problems(d), "idss_typ 0.009 lies outside"));
  d = njfet();
  d.jfet.idss_a.min = 0;
  CHECK(mentions(store::device_problems(d), "idss_min 0 must be above 0"));
  d = njfet();
  d.jfet.cgs_f = -1e-12;
  CHECK(mentions(store::device_problems(d), "cgs"));

  auto b = npn();
  b.bjt.hfe.typ = 500;
  CHECK(mentions(store::device_problems(b), "hfe_typ 500 lies outside"));
  b = npn();
  b.bjt.vaf_v = 0;
  CHECK(mentions(store::device_problems(b), "vaf 0 must be above 0"));
  b = npn();
  b.name = " ";
  CHECK(mentions(store::device_problems(b), "device name is empty"));
}

TEST_CASE("piece_problems: a piece carries the figures of its device's kind") {
  devices::MeasuredPiece m;
  m.label = "J1";
  m.device = "SJ-101";
  m.idss_a = 2.9e-3;
  m.vp_v = -1.45;
  CHECK(store::piece_problems(m, njfet()).empty());
  m.vp_v = 1.45;
  CHECK(mentions(store::piece_problems(m, njfet()), "vp 1.45 must be negative for NJFET 'SJ-101'"));
  m.vp_v.reset();
  m.idss_a.reset();
  CHECK(mentions(store::piece_problems(m, njfet()), "neither idss nor vp"));
  m.idss_a = 2e-3;
  m.uncertainty = 1.5;
  CHECK(mentions(store::piece_problems(m, njfet()), "uncertainty 1.5"));

  devices::MeasuredPiece q;
  q.label = "Q3";
  q.device = "SQ-410";
  q.hfe = 287;
  CHECK(store::piece_problems(q, npn()).empty());
  q.vp_v = -1;
  CHECK(mentions(store::piece_problems(q, npn()), "idss/vp given for BJT"));
  q.vp_v.reset();
  q.hfe.reset();
  CHECK(mentions(store::piece_problems(q, npn()), "hfe not measured"));
}

TEST_CASE("describe: kind, value in SI notation, tolerance, ratings, bin") {
  Part r = resistor(4700, 1);
  r.tol = units::Tolerance{0.05, 0.05};
  r.bin = "A3";
  CHECK(store::describe(r) == "R 4.7k 5% bin A3");
  r.power_w = 0.25;
  CHECK(store::describe(r) == "R 4.7k 5% 0.25W bin A3");

  Part c;
  c.kind = PartKind::capacitor;
  c.value = 100e-6;
  c.tol = units::Tolerance{0.2, 0.8};
  c.volts = 25;
  c.dielectric = "electrolytic";
  CHECK(store::describe(c) == "C 100u -20/+80% 25V electrolytic");

  Part q;
  q.kind = PartKind::npn;
  q.device = "SQ-410";
  q.bin = "T1";
  CHECK(store::describe(q) == "NPN SQ-410 bin T1");
}

TEST_CASE("device_columns: each figure once, in its SI unit, read and written at its own place in the record") {
  using store::DeviceColumn;
  const auto cols = store::device_columns();
  std::set<std::string_view> names;
  for (const DeviceColumn& c : cols) CHECK(names.insert(c.name).second);
  // The families in order: the JFET figures, the BJT figures, the maximum ratings.
  CHECK(std::is_sorted(cols.begin(), cols.end(),
                       [](const DeviceColumn& a, const DeviceColumn& b) { return a.family < b.family; }));
  // The SI units a datasheet states them in (IEC 60747: IDSS a current, VGS(off) a voltage,
  // Ciss a capacitance; hFE a plain ratio; PD a power).
  auto unit_of = [&](std::string_view name) {
    for (const DeviceColumn& c : cols)
      if (c.name == name) return c.unit;
    FAIL("no column ", std::string(name));
    return units::Unit::none;
  };
  CHECK(unit_of("idss_min") == units::Unit::ampere);
  CHECK(unit_of("vp_typ") == units::Unit::volt);
  CHECK(unit_of("cgd") == units::Unit::farad);
  CHECK(unit_of("hfe_max") == units::Unit::none);
  CHECK(unit_of("vce_sat") == units::Unit::volt);
  CHECK(unit_of("p_max") == units::Unit::watt);
  // Each column's setter reaches the figure its getter reads, and no other column's.
  for (std::size_t i = 0; i < cols.size(); ++i) {
    INFO(cols[i].name);
    devices::DeviceRecord d;
    std::vector<std::optional<double>> before;
    for (const DeviceColumn& c : cols) before.push_back(c.get(d));
    cols[i].set(d, 1234.5);
    for (std::size_t k = 0; k < cols.size(); ++k) {
      INFO(cols[k].name);
      if (k == i)
        CHECK(cols[k].get(d) == std::optional<double>(1234.5));
      else
        CHECK(cols[k].get(d) == before[k]);
    }
  }
  // Optional figures read empty on a record that does not give them; the others have values.
  const devices::DeviceRecord blank;
  for (const DeviceColumn& c : cols) {
    INFO(c.name);
    const bool optional = c.form == DeviceColumn::Form::typical || c.form == DeviceColumn::Form::rating;
    CHECK(c.get(blank).has_value() == !optional);
  }
}
