// Tests of src/devices/spread.cpp: the JFET IDSS/VP correlation model (DOMAIN.md section 1,
// "Spread"), its corners and seeded Monte Carlo, measured pieces, and BJT hFE spread.
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

}  // namespace

TEST_CASE("JFET corners lie in the datasheet box, and BETA = IDSS/VP^2 stays in its band") {
  const DeviceSpread s(njfet_record());
  REQUIRE(s.corners().size() >= 3);
  const double beta_typ = std::sqrt(1e-3 * 8e-3) / (0.8 * 4.0);  // geometric means of the ends
  for (const auto& c : s.corners()) {
    CAPTURE(c.tag);
    CHECK(c.idss_a >= 1e-3 * (1 - 1e-9));
    CHECK(c.idss_a <= 8e-3 * (1 + 1e-9));
    CHECK(c.vp_abs_v >= 0.8 * (1 - 1e-9));
    CHECK(c.vp_abs_v <= 4.0 * (1 + 1e-9));
    const double beta = c.idss_a / (c.vp_abs_v * c.vp_abs_v);
    CHECK(beta >= beta_typ / 1.6 * (1 - 1e-9));
    CHECK(beta <= beta_typ * 1.6 * (1 + 1e-9));
    CHECK(s.contains(c));
  }
  CHECK(s.contains(s.nominal()));
  // The corners reach both ends of the IDSS range; |VP| reaches as far as the BETA band
  // allows inside the IDSS range (NOTES 2-3 in spread.hpp): sqrt(IDSS_min/BETA_max) and
  // sqrt(IDSS_max/BETA_min).
  auto by = [&](auto f) {
    double lo = 1e9, hi = 0;
    for (const auto& c : s.corners()) {
      lo = std::min(lo, f(c));
      hi = std::max(hi, f(c));
    }
    return std::pair{lo, hi};
  };
  const auto [id_lo, id_hi] = by([](const PieceFigures& c) { return c.idss_a; });
  const auto [vp_lo, vp_hi] = by([](const PieceFigures& c) { return c.vp_abs_v; });
  CHECK(near(id_lo, 1e-3));
  CHECK(near(id_hi, 8e-3));
  CHECK(near(vp_lo, std::max(0.8, std::sqrt(1e-3 / (beta_typ * 1.6)))));
  CHECK(near(vp_hi, std::min(4.0, std::sqrt(8e-3 / (beta_typ / 1.6)))));
}

TEST_CASE("No JFET corner pairs the smallest IDSS with the largest |VP|, or the largest IDSS with the smallest") {
  const DeviceSpread s(njfet_record());
  for (const auto& c : s.corners()) {
    CAPTURE(c.tag);
    CHECK_FALSE((near(c.idss_a, 1e-3, 1e-3) && near(c.vp_abs_v, 4.0, 1e-3)));
    CHECK_FALSE((near(c.idss_a, 8e-3, 1e-3) && near(c.vp_abs_v, 0.8, 1e-3)));
  }
  // Those pieces do not exist in the model at all.
  CHECK_FALSE(s.contains({1e-3, 4.0, 0, ""}));
  CHECK_FALSE(s.contains({8e-3, 0.8, 0, ""}));
  // Pieces outside the box are rejected too.
  CHECK_FALSE(s.contains({0.5e-3, 1.0, 0, ""}));
  CHECK_FALSE(s.contains({3e-3, 5.0, 0, ""}));
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
  CHECK(vp_lo < 0.88);  // the model's smallest |VP| is 0.84 V
  CHECK(vp_hi > 3.6);  // and its largest 3.81 V
  // Correlation (DOMAIN.md 1): large |VP| goes with large IDSS.
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
  REQUIRE(s.corners().size() == 2);
  CHECK(s.corners()[0].hfe == doctest::Approx(100));
  CHECK(s.corners()[1].hfe == doctest::Approx(400));
  CHECK(s.nominal().hfe == doctest::Approx(200));
  const auto a = s.samples(300, 5), b = s.samples(300, 5);
  for (std::size_t i = 0; i < a.size(); ++i) {
    CHECK(a[i].hfe == b[i].hfe);
    CHECK(s.contains(a[i]));
  }
  CHECK(s.bjt(s.corners()[1]).bf == doctest::Approx(400));
  MeasuredPiece m;
  m.label = "Q7";
  m.hfe = 260;
  m.uncertainty = 0.05;
  const DeviceSpread ms(npn_record(), m);
  CHECK(ms.corners()[0].hfe == doctest::Approx(247));
  CHECK(ms.corners()[1].hfe == doctest::Approx(273));
  CHECK_FALSE(ms.contains({0, 0, 200, ""}));
  DeviceRecord bad = npn_record();
  bad.bjt.hfe = {0, 0, {}};
  CHECK_THROWS_AS(DeviceSpread{bad}, shelfstage::InputError);
}
