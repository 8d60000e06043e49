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

Part resistor_part(double ohms, int qty) {
  Part p;
  p.kind = PartKind::resistor;
  p.value = ohms;
  p.qty = qty;
  return p;
}

}  // namespace

TEST_CASE("kind codes: the seven codes of docs/interface.md, both ways, any case") {
  for (auto k : {PartKind::resistor, PartKind::capacitor, PartKind::njfet, PartKind::pjfet, PartKind::npn,
                 PartKind::pnp, PartKind::opamp}) {
    PartKind back = PartKind::resistor;
    REQUIRE(store::parse_kind_code(store::kind_code(k), back));
    CHECK(back == k);
  }
  CHECK(store::kind_code(PartKind::njfet) == "NJFET");
  CHECK(store::kind_code(PartKind::opamp) == "OPAMP");
  CHECK(store::kind_codes_text() == "R, C, NJFET, PJFET, NPN, PNP, OPAMP");
  PartKind k{};
  CHECK(store::parse_kind_code("OpAmp", k));
  CHECK(k == PartKind::opamp);
  CHECK(store::parse_kind_code(" npn ", k));
  CHECK(k == PartKind::npn);
  CHECK(store::parse_kind_code("c", k));
  CHECK(k == PartKind::capacitor);
  CHECK_FALSE(store::parse_kind_code("Q", k));
  CHECK_FALSE(store::parse_kind_code("", k));
  CHECK_FALSE(store::parse_kind_code("RR", k));
  CHECK_FALSE(store::parse_kind_code("JFET", k));
}

TEST_CASE("kind codes map to the device kinds and back") {
  devices::DeviceKind d{};
  CHECK_FALSE(store::device_kind(PartKind::resistor, d));
  CHECK_FALSE(store::device_kind(PartKind::capacitor, d));
  for (auto dk : {devices::DeviceKind::njfet, devices::DeviceKind::pjfet, devices::DeviceKind::npn,
                  devices::DeviceKind::pnp, devices::DeviceKind::opamp}) {
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
  Part r = resistor_part(1000, 1);
  r.dielectric = "electrolytic";
  CHECK_FALSE(r.polarised());
}

TEST_CASE("part_problems: a sound resistor, capacitor and transistor pass") {
  Part r = resistor_part(4700, 10);
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

  // An op-amp line names its type and counts packages, as a transistor line does.
  Part u;
  u.kind = PartKind::opamp;
  u.device = "SA-210";
  u.qty = 6;
  CHECK(store::part_problems(u).empty());
  u.value = 2;
  CHECK(mentions(store::part_problems(u), "value 2 given for kind OPAMP (an op-amp names a device)"));
  u.value = 0;
  u.device.clear();
  CHECK(mentions(store::part_problems(u), "device is missing for kind OPAMP"));
}

TEST_CASE("part_problems names the field and the value") {
  CHECK(mentions(store::part_problems(resistor_part(0, 1)), "value 0 must be above zero"));
  CHECK(mentions(store::part_problems(resistor(-10, 1)), "value -10"));
  CHECK(mentions(store::part_problems(resistor_part(std::numeric_limits<double>::quiet_NaN(), 1)), "value nan"));
  CHECK(mentions(store::part_problems(resistor_part(100, -3)), "qty -3 is negative"));

  Part r = resistor_part(100, 2);
  r.reserved = 3;
  CHECK(mentions(store::part_problems(r), "reserved 3 is more than qty 2"));
  r.reserved = -1;
  CHECK(mentions(store::part_problems(r), "reserved -1 is negative"));

  r = resistor_part(100, 2);
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

devices::DeviceRecord njfet_record() {
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

devices::DeviceRecord npn_record() {
  devices::DeviceRecord d;
  d.name = "SQ-410";
  d.kind = devices::DeviceKind::npn;
  d.bjt.hfe = {110, 450, 250};
  d.bjt.is_a = 1.5e-14;
  d.bjt.vaf_v = 80;
  return d;
}

// An invented dual single-supply type (figures of the usual order for a general-purpose part,
// not any one datasheet's).
devices::DeviceRecord opamp() {
  devices::DeviceRecord d;
  d.name = "SA-210";
  d.kind = devices::DeviceKind::opamp;
  auto& o = d.opamp;
  o.channels = 2;
  o.vs_min_v = 3;
  o.vs_max_v = 32;
  o.gbw_hz = {1e6, 7e5};
  o.slew_v_per_s = {5e5, std::nullopt};
  o.aol = {1e5, 2.5e4};
  o.out_drop_hi_v = 1.5;
  o.out_drop_lo_v = 0.02;
  o.out_drop_ohm = 150;
  o.iout_max_a = 20e-3;
  o.cm_drop_hi_v = 1.5;
  o.cm_drop_lo_v = -0.3;
  o.vos_max_v = 5e-3;
  o.ib_max_a = 250e-9;
  d.ratings.v_max_v = 32;
  return d;
}

}  // namespace

TEST_CASE("device_problems: VGS(off) sign follows the channel, ranges are ordered") {
  // Datasheet convention (docs/physics.md, Signs): VGS(off) < 0 for N-channel, > 0 for P-channel.
  CHECK(store::device_problems(njfet_record()).empty());
  CHECK(store::device_problems(npn_record()).empty());

  auto d = njfet_record();
  d.jfet.vp_v = {0.5, 3.0, std::nullopt};
  CHECK(mentions(store::device_problems(d), "vp_min 0.5 must be negative for an N-channel JFET"));
  d.kind = devices::DeviceKind::pjfet;
  CHECK(store::device_problems(d).empty());

  d = njfet_record();
  d.jfet.idss_a = {5e-3, 1e-3, std::nullopt};
  CHECK(mentions(store::device_problems(d), "idss_min 0.005 is above idss_max 0.001"));
  d = njfet_record();
  d.jfet.idss_a.typ = 9e-3;
  CHECK(mentions(store::device_problems(d), "idss_typ 0.009 lies outside"));
  d = njfet_record();
  d.jfet.idss_a.min = 0;
  CHECK(mentions(store::device_problems(d), "idss_min 0 must be above 0"));
  d = njfet_record();
  d.jfet.cgs_f = -1e-12;
  CHECK(mentions(store::device_problems(d), "cgs"));

  auto b = npn_record();
  b.bjt.hfe.typ = 500;
  CHECK(mentions(store::device_problems(b), "hfe_typ 500 lies outside"));
  b = npn_record();
  b.bjt.vaf_v = 0;
  CHECK(mentions(store::device_problems(b), "vaf 0 must be above 0"));
  b = npn_record();
  b.name = " ";
  CHECK(mentions(store::device_problems(b), "device name is empty"));
}

TEST_CASE("device_problems: every op-amp rule names its column and the value") {
  CHECK(store::device_problems(opamp()).empty());
  struct Case {
    const char* what;
    void (*change)(devices::DeviceRecord&);
    const char* message;
  };
  const Case cases[] = {
      {"channels", [](auto& d) { d.opamp.channels = 3; }, "channels 3 must be 1, 2 or 4"},
      {"vs_min", [](auto& d) { d.opamp.vs_min_v = 0; }, "vs_min 0 must be above 0"},
      {"vs order", [](auto& d) { d.opamp.vs_min_v = 32; }, "vs_min 32 is not below vs_max 32"},
      {"gbw",
       [](auto& d) {
         d.opamp.gbw_hz = {0, std::nullopt};
       },
       "gbw 0 must be above 0"},
      {"gbw_min", [](auto& d) { d.opamp.gbw_hz.min = 2e6; }, "gbw_min 2000000 is above gbw 1000000"},
      {"gbw_min sign", [](auto& d) { d.opamp.gbw_hz.min = -1; }, "gbw_min -1 must be above 0"},
      {"slew", [](auto& d) { d.opamp.slew_v_per_s.typ = -5e5; }, "slew -500000 must be above 0"},
      {"slew_min", [](auto& d) { d.opamp.slew_v_per_s.min = 6e5; }, "slew_min 600000 is above slew 500000"},
      {"aol",
       [](auto& d) {
         d.opamp.aol = {1, std::nullopt};
       },
       "aol 1 must be above 1"},
      {"aol_min", [](auto& d) { d.opamp.aol.min = 2e5; }, "aol_min 200000 is above aol 100000"},
      {"pole2", [](auto& d) { d.opamp.pole2_hz = 0; }, "pole2 0 must be above 0"},
      {"out_drop_hi", [](auto& d) { d.opamp.out_drop_hi_v = -0.1; }, "out_drop_hi -0.1 must be at least 0"},
      {"out_drop_lo", [](auto& d) { d.opamp.out_drop_lo_v = -0.1; }, "out_drop_lo -0.1 must be at least 0"},
      {"cm_drop_hi", [](auto& d) { d.opamp.cm_drop_hi_v = -1.5; }, "cm_drop_hi -1.5 must be at least -1"},
      {"cm_drop_lo", [](auto& d) { d.opamp.cm_drop_lo_v = -1.2; }, "cm_drop_lo -1.2 must be at least -1"},
      {"swing room", [](auto& d) { d.opamp.out_drop_lo_v = 1.5; },
       "out_drop_hi 1.5 and out_drop_lo 1.5 leave no output swing at vs_min 3"},
      {"cm room", [](auto& d) { d.opamp.cm_drop_hi_v = 3.3; },
       "cm_drop_hi 3.3 and cm_drop_lo -0.3 leave no common-mode range at vs_min 3"},
      {"out_drop_ohm", [](auto& d) { d.opamp.out_drop_ohm = -1; }, "out_drop_ohm -1 must be at least 0"},
      {"iout_max", [](auto& d) { d.opamp.iout_max_a = 0; }, "iout_max 0 must be above 0"},
      {"vos", [](auto& d) { d.opamp.vos_max_v = -1e-3; }, "vos -0.001 must be at least 0"},
      {"ib", [](auto& d) { d.opamp.ib_max_a = std::nan(""); }, "ib nan must be at least 0"},
      {"ios", [](auto& d) { d.opamp.ios_max_a = -1e-9; }, "ios -1e-09 must be at least 0"},
      {"en", [](auto& d) { d.opamp.en_v_rthz = -1e-9; }, "en -1e-09 must be at least 0"},
      {"in", [](auto& d) { d.opamp.in_a_rthz = -1e-12; }, "in -1e-12 must be at least 0"},
      {"iq", [](auto& d) { d.opamp.iq_a = -1e-3; }, "iq -0.001 must be at least 0"},
      {"v_max", [](auto& d) { d.ratings.v_max_v = 30; }, "v_max 30 (the absolute maximum supply) is below vs_max 32"},
  };
  for (const Case& c : cases) {
    CAPTURE(c.what);
    auto d = opamp();
    c.change(d);
    const auto problems = store::device_problems(d);
    CHECK(problems.size() == 1);
    CHECK(mentions(problems, std::string("device 'SA-210': ") + c.message));
  }
  // The limits themselves pass: a drop of 0, a common-mode range 1 V beyond a rail, v_max at
  // vs_max, channels 1 and 4, figures not stated.
  auto d = opamp();
  d.opamp.out_drop_hi_v = 0;
  d.opamp.cm_drop_hi_v = -1;
  d.opamp.channels = 4;
  d.opamp.gbw_hz.min.reset();
  CHECK(store::device_problems(d).empty());
  d.opamp.channels = 1;
  d.opamp.ios_max_a = 0;
  CHECK(store::device_problems(d).empty());
  // An op-amp is not checked as a transistor: its empty BJT figures raise nothing.
  CHECK(d.bjt.hfe.min == 0);
}

TEST_CASE("piece_problems: an op-amp has no measured pieces") {
  devices::MeasuredPiece m;
  m.label = "U1";
  m.device = "SA-210";
  m.hfe = 100;
  CHECK(mentions(store::piece_problems(m, opamp()),
                 "piece 'U1': device 'SA-210' is an op-amp; measured pieces are transistors"));
}

TEST_CASE("piece_problems: a piece carries the figures of its device's kind") {
  devices::MeasuredPiece m;
  m.label = "J1";
  m.device = "SJ-101";
  m.idss_a = 2.9e-3;
  m.vp_v = -1.45;
  CHECK(store::piece_problems(m, njfet_record()).empty());
  m.vp_v = 1.45;
  CHECK(mentions(store::piece_problems(m, njfet_record()), "vp 1.45 must be negative for NJFET 'SJ-101'"));
  m.vp_v.reset();
  m.idss_a.reset();
  CHECK(mentions(store::piece_problems(m, njfet_record()), "neither idss nor vp"));
  m.idss_a = 2e-3;
  m.uncertainty = 1.5;
  CHECK(mentions(store::piece_problems(m, njfet_record()), "uncertainty 1.5"));

  devices::MeasuredPiece q;
  q.label = "Q3";
  q.device = "SQ-410";
  q.hfe = 287;
  CHECK(store::piece_problems(q, npn_record()).empty());
  q.vp_v = -1;
  CHECK(mentions(store::piece_problems(q, npn_record()), "idss/vp given for BJT"));
  q.vp_v.reset();
  q.hfe.reset();
  CHECK(mentions(store::piece_problems(q, npn_record()), "hfe not measured"));
}

TEST_CASE("describe: kind, value in SI notation, tolerance, ratings, bin") {
  Part r = resistor_part(4700, 1);
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

  q.kind = PartKind::opamp;
  q.device = "SA-210";
  q.bin = "E1";
  CHECK(store::describe(q) == "OPAMP SA-210 bin E1");
}

TEST_CASE("device_columns: each figure once, in its SI unit, read and written at its own place in the record") {
  using store::DeviceColumn;
  const auto cols = store::device_columns();
  std::set<std::string_view> names;
  for (const DeviceColumn& c : cols) CHECK(names.insert(c.name).second);
  // The families in order: the JFET figures, the BJT figures, the maximum ratings, the op-amp
  // figures.
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
  CHECK(unit_of("gbw") == units::Unit::hertz);
  CHECK(unit_of("en") == units::Unit::volt);  // per root hertz: the notation reads 12n or 12nV
  CHECK(unit_of("ib") == units::Unit::ampere);
  CHECK(unit_of("out_drop_ohm") == units::Unit::ohm);
  // Each column's setter reaches the figure its getter reads, and no other column's (a whole
  // number, which the channel count holds too).
  for (std::size_t i = 0; i < cols.size(); ++i) {
    INFO(cols[i].name);
    devices::DeviceRecord d;
    std::vector<std::optional<double>> before;
    for (const DeviceColumn& c : cols) before.push_back(c.get(d));
    cols[i].set(d, 1234);
    for (std::size_t k = 0; k < cols.size(); ++k) {
      INFO(cols[k].name);
      if (k == i)
        CHECK(cols[k].get(d) == std::optional<double>(1234));
      else
        CHECK(cols[k].get(d) == before[k]);
    }
  }
  // Optional figures read empty on a record that does not give them; the others have values.
  const devices::DeviceRecord blank;
  for (const DeviceColumn& c : cols) {
    INFO(c.name);
    const bool optional = c.form == DeviceColumn::Form::typical || c.form == DeviceColumn::Form::rating ||
                          c.form == DeviceColumn::Form::stated;
    CHECK(c.get(blank).has_value() == !optional);
  }
}

TEST_CASE("device_columns: the op-amp columns, their notations, and the family of each kind") {
  using store::DeviceColumn;
  std::vector<std::string_view> names;
  for (const DeviceColumn& c : store::device_columns())
    if (c.family == DeviceColumn::Family::opamp) names.push_back(c.name);
  const std::vector<std::string_view> expected = {
      "channels", "vs_min", "vs_max",      "gbw_min",     "gbw",          "slew_min", "slew",       "aol_min",
      "aol",      "pole2",  "out_drop_hi", "out_drop_lo", "out_drop_ohm", "iout_max", "cm_drop_hi", "cm_drop_lo",
      "vos",      "ib",     "ios",         "en",          "in",           "iq"};
  CHECK(names == expected);
  for (const DeviceColumn& c : store::device_columns()) {
    INFO(c.name);
    const auto want = c.name == "channels"                       ? DeviceColumn::Notation::count
                      : c.name == "aol" || c.name == "aol_min"   ? DeviceColumn::Notation::gain
                      : c.name == "slew" || c.name == "slew_min" ? DeviceColumn::Notation::slew
                                                                 : DeviceColumn::Notation::plain;
    CHECK(c.notation == want);
  }
  // A stated minimum and its typical reach the two halves of one figure.
  devices::DeviceRecord d;
  for (const DeviceColumn& c : store::device_columns()) {
    if (c.name == "gbw") c.set(d, 1e6);
    if (c.name == "gbw_min") c.set(d, 7e5);
  }
  CHECK(d.opamp.gbw_hz.typ == 1e6);
  CHECK(d.opamp.gbw_hz.min == 7e5);
  CHECK(store::device_family(devices::DeviceKind::opamp) == DeviceColumn::Family::opamp);
  CHECK(store::device_family(devices::DeviceKind::pjfet) == DeviceColumn::Family::jfet);
  CHECK(store::device_family(devices::DeviceKind::pnp) == DeviceColumn::Family::bjt);
}
