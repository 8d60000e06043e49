// Tests of src/devices/spread.cpp: the JFET IDSS/VP spread models (correlated band and whole box),
// its corners and seeded Monte Carlo, measured pieces, and BJT hFE and VBE spread.
#include "shelfstage/devices/spread.hpp"

#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>

#include "shelfstage/error.hpp"

using namespace shelfstage::devices;

namespace {

// A general-purpose N-channel part as small-signal datasheets give it: IDSS 1..8 mA,
// VGS(off) -0.8..-4 V (illustrative figures of that class of part).
DeviceRecord njfet_record() {
  DeviceRecord r;
  r.name = "NJ-test";
  r.kind = DeviceKind::njfet;
  r.jfet.idss_a = {1e-3, 8e-3, {}};
  r.jfet.vp_v = {-0.8, -4.0, {}};
  r.jfet.lambda_per_v = 0.01;
  return r;
}

DeviceRecord npn_record() {
  DeviceRecord r;
  r.name = "NPN-test";
  r.kind = DeviceKind::npn;
  r.bjt.hfe = {100, 400, 200.0};
  return r;
}

bool near(double a, double b, double rel = 1e-6) { return std::abs(a - b) <= rel * std::abs(b); }

// The extremes of a figure over a spread's corners.
template <class F>
std::pair<double, double> extent(const DeviceSpread& s, F f) {
  double lo = 1e9, hi = 0;
  for (const auto& c : s.corners()) {
    lo = std::min(lo, f(c));
    hi = std::max(hi, f(c));
  }
  return {lo, hi};
}

bool has_piece(const DeviceSpread& s, double idss, double vp) {
  return std::any_of(s.corners().begin(), s.corners().end(),
                     [&](const PieceFigures& c) { return near(c.idss_a, idss, 1e-6) && near(c.vp_abs_v, vp, 1e-6); });
}

}  // namespace

// The promise a worst case makes (a datasheet's IDSS and VGS(off) limits are each met by
// some piece; its diagonal pieces are the most real extremes): checked for both models on
// records of several shapes, including typicals off the geometric mean.
TEST_CASE("Both JFET models reach every datasheet limit of IDSS and VP and hold both diagonal pieces") {
  std::vector<DeviceRecord> records = {njfet_record()};
  DeviceRecord narrow_vp = njfet_record();  // IDSS spreads far more than VP^2
  narrow_vp.jfet.idss_a = {0.5e-3, 20e-3, 6e-3};
  narrow_vp.jfet.vp_v = {-1.5, -2.5, -2.0};
  records.push_back(narrow_vp);
  DeviceRecord wide_vp = njfet_record();  // VP^2 spreads far more than IDSS
  wide_vp.jfet.idss_a = {2e-3, 3e-3, {}};
  wide_vp.jfet.vp_v = {-0.6, -6.0, -1.0};
  records.push_back(wide_vp);
  DeviceRecord p = njfet_record();
  p.kind = DeviceKind::pjfet;
  p.jfet.vp_v = {0.6, 2.8, {}};
  records.push_back(p);
  for (const auto& r : records) {
    for (SpreadModel m : {SpreadModel::correlated, SpreadModel::box}) {
      const DeviceSpread s(r, {m});
      CAPTURE(s.description());
      const double id_lo = std::min(r.jfet.idss_a.min, r.jfet.idss_a.max),
                   id_hi = std::max(r.jfet.idss_a.min, r.jfet.idss_a.max);
      const double vp_lo = std::min(std::abs(r.jfet.vp_v.min), std::abs(r.jfet.vp_v.max));
      const double vp_hi = std::max(std::abs(r.jfet.vp_v.min), std::abs(r.jfet.vp_v.max));
      const auto [i0, i1] = extent(s, [](const PieceFigures& c) { return c.idss_a; });
      const auto [v0, v1] = extent(s, [](const PieceFigures& c) { return c.vp_abs_v; });
      CHECK(near(i0, id_lo));
      CHECK(near(i1, id_hi));
      CHECK(near(v0, vp_lo));
      CHECK(near(v1, vp_hi));
      CHECK(has_piece(s, id_lo, vp_lo));
      CHECK(has_piece(s, id_hi, vp_hi));
      const auto diagonal = s.diagonal_pieces();
      REQUIRE(diagonal.size() == 2);
      for (const auto& d : diagonal) CHECK(s.contains(d));
      for (const auto& c : s.corners()) {
        CAPTURE(c.tag);
        CHECK(s.contains(c));
        CHECK(c.idss_a >= id_lo * (1 - 1e-9));
        CHECK(c.idss_a <= id_hi * (1 + 1e-9));
        CHECK(c.vp_abs_v >= vp_lo * (1 - 1e-9));
        CHECK(c.vp_abs_v <= vp_hi * (1 + 1e-9));
      }
      CHECK(s.contains(s.nominal()));
      // Pieces at each VP limit span IDSS as far as the model allows there.
      CHECK(std::count_if(s.corners().begin(), s.corners().end(),
                          [&](const PieceFigures& c) { return near(c.vp_abs_v, vp_lo, 1e-6); }) >= 1);
      CHECK(std::count_if(s.corners().begin(), s.corners().end(),
                          [&](const PieceFigures& c) { return near(c.vp_abs_v, vp_hi, 1e-6); }) >= 1);
    }
  }
}

TEST_CASE("The correlated band cuts off only the anti-diagonal pieces; the box holds them") {
  const DeviceRecord r = njfet_record();
  const DeviceSpread band(r), box(r, {SpreadModel::box});
  CHECK(band.model_name() == "correlated");
  CHECK(box.model_name() == "box");
  CHECK(band.description().find("correlated") != std::string::npos);
  CHECK(box.description().find("box") != std::string::npos);
  // BETA spans at least the diagonal pieces' BETAs (here 1.56 mA/V^2 and 0.5 mA/V^2).
  const auto [b0, b1] = extent(band, [](const PieceFigures& c) { return c.idss_a / (c.vp_abs_v * c.vp_abs_v); });
  CHECK(b0 <= 8e-3 / 16.0 * (1 + 1e-9));
  CHECK(b1 >= 1e-3 / 0.64 * (1 - 1e-9));
  // The anti-diagonal pieces: outside the band, corners of the box.
  CHECK_FALSE(band.contains({1e-3, 4.0, 0, ""}));
  CHECK_FALSE(band.contains({8e-3, 0.8, 0, ""}));
  CHECK(box.contains({1e-3, 4.0, 0, ""}));
  CHECK(box.contains({8e-3, 0.8, 0, ""}));
  CHECK(box.corners().size() == 4);
  CHECK(has_piece(box, 1e-3, 4.0));
  CHECK(has_piece(box, 8e-3, 0.8));
  // Either model rejects pieces outside the datasheet box.
  for (const DeviceSpread* s : {&band, &box}) {
    CHECK_FALSE(s->contains({0.5e-3, 1.0, 0, ""}));
    CHECK_FALSE(s->contains({3e-3, 5.0, 0, ""}));
  }
  // Corner tags say where a piece sits.
  CHECK(std::any_of(band.corners().begin(), band.corners().end(),
                    [](const PieceFigures& c) { return c.tag.find("diagonal piece") != std::string::npos; }));
  SpreadModel m;
  CHECK(parse_spread_model("BOX", m));
  CHECK(m == SpreadModel::box);
  CHECK(parse_spread_model("correlated", m));
  CHECK(m == SpreadModel::correlated);
  CHECK_FALSE(parse_spread_model("wide", m));
}

TEST_CASE("JFET Monte Carlo: reproducible for a seed, every sample inside the model, spread over it") {
  const DeviceSpread s(njfet_record());
  const auto a = s.samples(2000, 42), b = s.samples(2000, 42), other = s.samples(2000, 43);
  REQUIRE(a.size() == 2000);
  int same = 0;
  for (std::size_t i = 0; i < a.size(); ++i) {
    CHECK(a[i].idss_a == b[i].idss_a);
    CHECK(a[i].vp_abs_v == b[i].vp_abs_v);
    same += a[i].idss_a == other[i].idss_a ? 1 : 0;
  }
  CHECK(same == 0);
  double id_lo = 1, id_hi = 0, vp_lo = 10, vp_hi = 0;
  for (const auto& p : a) {
    CHECK(s.contains(p));
    id_lo = std::min(id_lo, p.idss_a);
    id_hi = std::max(id_hi, p.idss_a);
    vp_lo = std::min(vp_lo, p.vp_abs_v);
    vp_hi = std::max(vp_hi, p.vp_abs_v);
  }
  // 2000 draws come close to every side of the polygon.
  CHECK(id_lo < 1.15e-3);
  CHECK(id_hi > 7.0e-3);
  CHECK(vp_lo < 0.85);  // the datasheet's smallest |VP| is 0.8 V
  CHECK(vp_hi > 3.7);   // and its largest 4 V
  // Correlation (a piece with a large |VP| tends to have a large IDSS): large |VP| goes with
  // large IDSS in the correlated model; in the box the two are independent.
  double mx = 0, my = 0;
  for (const auto& p : a) {
    mx += std::log(p.vp_abs_v) / 2000;
    my += std::log(p.idss_a) / 2000;
  }
  double sxy = 0, sxx = 0, syy = 0;
  for (const auto& p : a) {
    const double dx = std::log(p.vp_abs_v) - mx, dy = std::log(p.idss_a) - my;
    sxy += dx * dy;
    sxx += dx * dx;
    syy += dy * dy;
  }
  CHECK(sxy / std::sqrt(sxx * syy) > 0.7);
  // The box draws over the whole box: anti-diagonal pieces come out too.
  const DeviceSpread box(njfet_record(), {SpreadModel::box});
  int small_idss_large_vp = 0;
  for (const auto& p : box.samples(2000, 42)) {
    CHECK(box.contains(p));
    small_idss_large_vp += (p.idss_a < 1.5e-3 && p.vp_abs_v > 3.0) ? 1 : 0;
  }
  CHECK(small_idss_large_vp > 0);
}

TEST_CASE("A measured JFET piece narrows the spread to its uncertainty") {
  const DeviceRecord r = njfet_record();
  MeasuredPiece m;
  m.label = "J3";
  m.device = r.name;
  m.idss_a = 4.1e-3;
  m.vp_v = -2.2;
  m.uncertainty = 0.03;
  const DeviceSpread s(r, m);
  CHECK(s.nominal().idss_a == doctest::Approx(4.1e-3));
  CHECK(s.nominal().vp_abs_v == doctest::Approx(2.2));
  REQUIRE_FALSE(s.corners().empty());
  for (const auto& c : s.corners()) {
    CHECK(c.idss_a >= 4.1e-3 * 0.97 * (1 - 1e-9));
    CHECK(c.idss_a <= 4.1e-3 * 1.03 * (1 + 1e-9));
    CHECK(c.vp_abs_v >= 2.2 * 0.97 * (1 - 1e-9));
    CHECK(c.vp_abs_v <= 2.2 * 1.03 * (1 + 1e-9));
  }
  for (const auto& p : s.samples(500, 7)) {
    CHECK(s.contains(p));
    CHECK(std::abs(p.idss_a / 4.1e-3 - 1) <= 0.03 + 1e-9);
  }
  CHECK(s.description().find("J3") != std::string::npos);
  // The datasheet piece that the measurement rules out is outside.
  CHECK_FALSE(s.contains({8e-3, 4.0, 0, ""}));
  // A JFET piece needs both figures; the message names the piece.
  MeasuredPiece half = m;
  half.vp_v.reset();
  try {
    DeviceSpread bad(r, half);
    FAIL("a JFET piece without VP was accepted");
  } catch (const shelfstage::InputError& e) {
    CHECK(std::string(e.what()).find("J3") != std::string::npos);
  }
}

TEST_CASE("BJT hFE spread: corners at the datasheet ends, samples inside, measured piece +/- its uncertainty") {
  const DeviceSpread s(npn_record());
  // hFE ends crossed with VBE's spread (30 mV each way by default): four corners.
  REQUIRE(s.corners().size() == 4);
  CHECK(s.corners()[0].hfe == doctest::Approx(100));
  CHECK(s.corners()[3].hfe == doctest::Approx(400));
  CHECK(s.corners()[0].vbe_shift_v == doctest::Approx(-0.03));
  CHECK(s.corners()[1].vbe_shift_v == doctest::Approx(0.03));
  CHECK(s.nominal().hfe == doctest::Approx(200));
  CHECK(s.nominal().vbe_shift_v == 0);
  // A piece 30 mV higher in VBE at the same current has IS smaller by exp(30 mV / VT).
  CHECK(s.bjt(s.corners()[1]).is_a / s.bjt(s.nominal()).is_a == doctest::Approx(std::exp(-0.03 / thermal_voltage(25))));
  const auto a = s.samples(300, 5), b = s.samples(300, 5);
  for (std::size_t i = 0; i < a.size(); ++i) {
    CHECK(a[i].hfe == b[i].hfe);
    CHECK(s.contains(a[i]));
  }
  CHECK(s.bjt(s.corners()[3]).bf == doctest::Approx(400));
  MeasuredPiece m;
  m.label = "Q7";
  m.hfe = 260;
  m.uncertainty = 0.05;
  const DeviceSpread ms(npn_record(), m);
  CHECK(ms.corners()[0].hfe == doctest::Approx(247));
  CHECK(ms.corners()[3].hfe == doctest::Approx(273));
  CHECK_FALSE(ms.contains({0, 0, 200, ""}));
  DeviceRecord bad = npn_record();
  bad.bjt.hfe = {0, 0, {}};
  CHECK_THROWS_AS(DeviceSpread{bad}, shelfstage::InputError);
}

// An op-amp's spread is its datasheet's limits (opamp.hpp): the same pieces the op-amp layer
// gives, the Monte Carlo inside them, the temperature through opamp_at.
TEST_CASE("An op-amp record's spread: its datasheet limits as corners, samples within them, a measured piece refused") {
  DeviceRecord r;
  r.name = "SA-210";
  r.kind = DeviceKind::opamp;
  r.opamp.channels = 2;
  r.opamp.vs_min_v = 10;
  r.opamp.vs_max_v = 36;
  r.opamp.gbw_hz = {1.1e6, 7e5};
  r.opamp.slew_v_per_s = {5e5, 3e5};
  r.opamp.aol = {2e5, 2.5e4};
  r.opamp.pole2_hz = 2.5e6;
  r.opamp.vos_max_v = 5e-3;
  r.opamp.ib_max_a = 400e-9;
  r.opamp.ios_max_a = 100e-9;
  const DeviceSpread s(r);
  CHECK(s.model_name() == "limits");
  CHECK(s.nominal().opamp.gbw_hz == 1.1e6);
  CHECK(s.nominal().opamp.vos_v == 0);
  REQUIRE(s.corners().size() == 16);
  const auto pieces = opamp_corners(r.opamp);
  for (std::size_t i = 0; i < pieces.size(); ++i) {
    CHECK(s.corners()[i].opamp.gbw_hz == pieces[i].figures.gbw_hz);
    CHECK(s.corners()[i].opamp.vos_v == pieces[i].figures.vos_v);
    CHECK(s.corners()[i].tag.find(pieces[i].tag) != std::string::npos);
    CHECK(s.contains(s.corners()[i]));
  }
  // A slow piece's second pole sits lower with its GBW (one process).
  CHECK(pieces.front().figures.pole2_hz == doctest::Approx(2.5e6 * 7e5 / 1.1e6));
  // Samples inside the limits, reaching toward both ends of the offset.
  double vos_lo = 0, vos_hi = 0;
  for (const auto& f : s.samples(400, 7)) {
    CHECK(s.contains(f));
    vos_lo = std::min(vos_lo, f.opamp.vos_v);
    vos_hi = std::max(vos_hi, f.opamp.vos_v);
    CHECK(std::abs(f.opamp.ib_plus_a - f.opamp.ib_minus_a) <= 100e-9 * (1 + 1e-9));
  }
  CHECK(vos_lo < -4e-3);
  CHECK(vos_hi > 4e-3);
  PieceFigures beyond = s.nominal();
  beyond.opamp.vos_v = 6e-3;
  CHECK_FALSE(s.contains(beyond));
  // A bipolar input's bias current is the same hot; the instance is the piece's.
  CHECK(s.opamp(s.corners()[0], 70.0).ib_plus_a == s.corners()[0].opamp.ib_plus_a);
  MeasuredPiece piece;
  piece.label = "U1";
  piece.device = r.name;
  piece.hfe = 100;
  CHECK_THROWS_WITH_AS(DeviceSpread(r, piece), "device SA-210 is an op-amp: a measured piece is a transistor's",
                       shelfstage::InputError);
}
