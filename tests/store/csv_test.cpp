// Tests of the CSV layer: RFC 4180 reading, the stock/device/piece files, every bad row
// reported, and export-then-import giving the identical stock.
#include "shelfstage/store/csv.hpp"

#include <doctest/doctest.h>

#include <cmath>
#include <fstream>
#include <sstream>

#include "shelfstage/store/database.hpp"
#include "store/fixture.hpp"

using namespace shelfstage;
using store::CsvError;
using store::Part;
using store::PartKind;

namespace {

std::vector<std::vector<std::string>> fields(std::string_view text) {
  std::vector<std::vector<std::string>> out;
  for (auto& r : store::read_csv(text)) out.push_back(r.fields);
  return out;
}

std::vector<std::size_t> lines(std::string_view text) {
  std::vector<std::size_t> out;
  for (auto& r : store::read_csv(text)) out.push_back(r.line);
  return out;
}

/// The problems of a CsvError thrown by f (empty when none is thrown).
template <class F>
std::vector<std::string> problems_of(F f) {
  try {
    f();
  } catch (const CsvError& e) {
    return e.problems();
  }
  return {};
}

const std::vector<std::string> kDevices = {"SJ-101", "SQ-410"};

std::vector<Part> stock(std::string_view text) { return store::parse_stock_csv(text, "stock.csv", kDevices); }

std::string read_file(const std::filesystem::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

}  // namespace

// --- RFC 4180 ------------------------------------------------------------------------------

TEST_CASE("RFC 4180 2.1-2.4: records on lines, a header, fields between commas") {
  using V = std::vector<std::vector<std::string>>;
  CHECK(fields("a,b,c\n1,2,3\n") == V{{"a", "b", "c"}, {"1", "2", "3"}});
  CHECK(fields("a,b,c\r\n1,2,3") == V{{"a", "b", "c"}, {"1", "2", "3"}});  // CRLF; last line unterminated
  CHECK(fields("a,,c,\n") == V{{"a", "", "c", ""}});                       // empty fields, trailing comma
  CHECK(fields(" a , b ") == V{{" a ", " b "}});                           // spaces belong to the field
  CHECK(fields("").empty());
}

TEST_CASE("RFC 4180 2.5-2.7: quoted fields with commas, line breaks and doubled quotes") {
  using V = std::vector<std::vector<std::string>>;
  CHECK(fields("\"a,b\",c\n") == V{{"a,b", "c"}});
  CHECK(fields("\"say \"\"hi\"\"\",x\n") == V{{"say \"hi\"", "x"}});
  CHECK(fields("\"\",x\n") == V{{"", "x"}});
  CHECK(fields("\"two\nlines\",x\r\nnext,y\n") == V{{"two\nlines", "x"}, {"next", "y"}});
  CHECK(fields("a, \"b\" ,c\n") == V{{"a", "b", "c"}});       // spaces around a quoted field are dropped
  CHECK(fields("5\" floppy,x\n") == V{{"5\" floppy", "x"}});  // a lone quote inside an unquoted field
}

TEST_CASE("line numbers count physical lines: quoted breaks, CRLF, blank lines, BOM") {
  const std::string text = "\xEF\xBB\xBFkind,note\r\n\r\nR,\"one\r\ntwo\"\r\n   \nC,x\n";
  const auto rows = store::read_csv(text);
  REQUIRE(rows.size() == 3);
  CHECK(rows[0].fields == std::vector<std::string>{"kind", "note"});  // the BOM is not part of "kind"
  CHECK(lines(text) == std::vector<std::size_t>{1, 3, 6});
}

TEST_CASE("malformed quoting is an error naming the line") {
  try {
    (void)store::read_csv("a,b\n1,\"open\n2,3\n");
    FAIL("no error");
  } catch (const CsvError& e) {
    CHECK(std::string(e.what()) == "line 2: unterminated quoted field (the quote opens on this line)");
  }
  try {
    (void)store::read_csv("a,b\n\"x\"y,2\n", "parts.csv");
    FAIL("no error");
  } catch (const CsvError& e) {
    CHECK(e.code() == ExitCode::bad_input);
    REQUIRE(e.problems().size() == 1);
    CHECK(e.problems()[0].rfind("parts.csv:2: text after the closing quote of field 1", 0) == 0);
  }
}

TEST_CASE("csv_field quotes only when needed, and read_csv reads it back") {
  CHECK(store::csv_field("plain") == "plain");
  CHECK(store::csv_field("") == "");
  CHECK(store::csv_field("a,b") == "\"a,b\"");
  CHECK(store::csv_field("5\" floppy") == "\"5\"\" floppy\"");
  CHECK(store::csv_field("x\ny") == "\"x\ny\"");
  CHECK(store::csv_field(" pad") == "\" pad\"");
  // A field that starts with a UTF-8 byte-order mark, first in the file: the reader drops one
  // mark at the start of a file, so the field is quoted (regression: found by the CSV fuzzer).
  CHECK(store::csv_field("\xEF\xBB\xBFx") == "\"\xEF\xBB\xBFx\"");
  {
    const auto rows = store::read_csv(store::csv_field("\xEF\xBB\xBF") + "\n");
    REQUIRE(rows.size() == 1);
    CHECK(rows[0].fields == std::vector<std::string>{"\xEF\xBB\xBF"});
  }
  for (std::string s : {"a,b", "q\"q", "line\r\nbreak", " lead", "trail ", "\"", ",,,"}) {
    const auto rows = store::read_csv(store::csv_field(s) + "," + store::csv_field(s) + "\n");
    REQUIRE(rows.size() == 1);
    CHECK(rows[0].fields == std::vector<std::string>{s, s});
  }
}

// --- stock -----------------------------------------------------------------------------------

TEST_CASE("stock: mixed SI and IEC 60062 notation parse to the right values") {
  // IEC 60062: the multiplier letter stands for the decimal point (1k5 = 1.5 kohm, 2u2 = 2.2 uF).
  const auto parts = stock(
      "kind,value,qty\nR,1k5,1\nR,3K3,1\nR,2M2,1\nR,4.7M,1\nR,6k8,1\nC,100n,1\nC,2u2,1\nR,47R,1\nR,R47,1\n"
      "C,4.7nF,1\nR,10kΩ,1\n");
  REQUIRE(parts.size() == 11);
  const double want[] = {1.5e3, 3.3e3, 2.2e6, 4.7e6, 6.8e3, 100e-9, 2.2e-6, 47, 0.47, 4.7e-9, 10e3};
  for (std::size_t i = 0; i < parts.size(); ++i) CHECK(parts[i].value == doctest::Approx(want[i]).epsilon(1e-12));
  CHECK(parts[5].kind == PartKind::capacitor);
}

TEST_CASE("stock: all columns, any order, any header case; optional fields") {
  const auto parts = stock(
      "Note,BIN,dielectric,volts,power,tol,qty,value,kind,package\n"
      "\"film, boxed\",C4,film,63V,,10%,12,47n,C,7.5 mm\n"
      ",A1,,,1/4W,1%,3,10k,r,0207\n"
      ",A2,,,1/8,,1,22k,R,\n"
      ",A3,,,250mW,,1,33k,R,\n"
      ",C9,electrolytic,25,,-20/+80%,2,100u,C,\n"
      ",T1,,,,,4,sq-410,NPN,TO-92\n");
  REQUIRE(parts.size() == 6);
  const Part& c = parts[0];
  CHECK(c.kind == PartKind::capacitor);
  CHECK(c.value == doctest::Approx(47e-9));
  CHECK(c.qty == 12);
  CHECK(c.tol == units::Tolerance{0.10, 0.10});
  CHECK(c.volts == 63);
  CHECK(c.dielectric == "film");
  CHECK(c.package == "7.5 mm");
  CHECK(c.bin == "C4");
  CHECK(c.note == "film, boxed");
  CHECK(parts[1].power_w == 0.25);
  CHECK(parts[1].tol == units::Tolerance{0.01, 0.01});
  CHECK(parts[2].power_w == 0.125);
  CHECK_FALSE(parts[2].tol);
  CHECK(parts[3].power_w == doctest::Approx(0.25));
  CHECK(parts[4].tol == units::Tolerance{0.20, 0.80});
  CHECK(parts[4].polarised());
  CHECK(parts[5].kind == PartKind::npn);
  CHECK(parts[5].device == "SQ-410");  // the spelling of the device list
  CHECK(parts[5].value == 0);
}

TEST_CASE("stock: every bad row is reported with its line, and nothing is returned") {
  const std::string text =
      "kind,value,qty\n"  // 1
      "R,4k7,10\n"        // 2 good
      "R,10k,ten\n"       // 3 non-numeric quantity
      "R,4.7q,5\n"        // 4 bad value
      "Q,1k,5\n"          // 5 unknown kind
      "C,100n,-3\n"       // 6 negative quantity
      "C,100n,5\n";       // 7 good
  try {
    (void)stock(text);
    FAIL("accepted a bad file");
  } catch (const CsvError& e) {
    CHECK(std::string(e.what()) == "stock.csv: 4 bad rows, nothing imported");
    CHECK(e.problems() == std::vector<std::string>{
                              "stock.csv:3: qty 'ten' is not a whole number",
                              "stock.csv:4: value '4.7q': unknown multiplier 'q' at column 4",
                              "stock.csv:5: kind 'Q' is not one of R, C, NJFET, PJFET, NPN, PNP, OPAMP",
                              "stock.csv:6: qty '-3' is negative",
                          });
  }
}

TEST_CASE("stock: odd rows a tired person types") {
  auto one = [](const std::string& row) {
    const auto p = problems_of([&] { (void)stock("kind,value,qty,power,volts,tol\n" + row + "\n"); });
    return p.empty() ? std::string() : p[0];
  };
  CHECK(one("R,,5") == "stock.csv:2: value is missing");
  CHECK(one(",1k,5") == "stock.csv:2: kind is missing");
  CHECK(one("R,1k,") == "stock.csv:2: qty is missing");
  CHECK(one("R,1k,2.5") == "stock.csv:2: qty '2.5' is not a whole number");
  CHECK(one("R,1k,99999999999") == "stock.csv:2: qty '99999999999' is too large");
  CHECK(one("R,1k,5,1/0").find("power '1/0'") != std::string::npos);
  CHECK(one("C,4.7,5").find("value '4.7': a capacitance needs its multiplier or unit") != std::string::npos);
  CHECK(one("C,1,5").find("value '1': a capacitance needs its multiplier or unit") != std::string::npos);
  CHECK(one("C,1F,5").empty());  // one farad, said so
  CHECK(one("C,1e-6,5").empty());
  CHECK(one("C,4R7,5").find("value '4R7'") != std::string::npos);  // EIA "4R7" pF is not ohms
  CHECK(one("R,1k,5,,,5%%").find("stock.csv:2: tol '5%%'") == 0);
  CHECK(one("R,1k,5,,16V").find("volts 16 given for kind R") != std::string::npos);
  CHECK(one("NPN,BC999,5").find("value 'BC999' is not a device") != std::string::npos);
  CHECK(one("NPN,SQ-410,5,,,5%").find("tol 5% given for kind NPN") != std::string::npos);
  CHECK(one("R,1k,5,,,,extra").find("7 fields but the header names 6 columns") != std::string::npos);
  CHECK(one("R,1k,10.0").empty());  // a whole number written with a point
  CHECK(one("R,1k,5").empty());     // short rows: the missing fields are empty
  CHECK(one(",,,,,").empty());      // a row of empty fields is skipped
}

TEST_CASE("stock: with device records, a transistor row must match its device's kind") {
  devices::DeviceRecord j;
  j.name = "SJ-101";
  j.kind = devices::DeviceKind::njfet;
  const std::vector<devices::DeviceRecord> known = {j};
  const auto ok = store::parse_stock_csv("kind,value,qty\nNJFET,sj-101,2\n", "stock.csv", known);
  REQUIRE(ok.size() == 1);
  CHECK(ok[0].device == "SJ-101");
  const auto p = problems_of(
      [&] { (void)store::parse_stock_csv("kind,value,qty\nNPN,SJ-101,2\nPNP,SJ-102,1\n", "stock.csv", known); });
  CHECK(p == std::vector<std::string>{
                 "stock.csv:2: value 'SJ-101' is a device of kind NJFET, not NPN",
                 "stock.csv:3: value 'SJ-102' is not a device in the device list (import it first with devices "
                 "import)"});
}

TEST_CASE("stock: header problems name the column") {
  auto header = [](const std::string& text) { return problems_of([&] { (void)stock(text); }); };
  CHECK(header("kind,value,qty,colour\n") ==
        std::vector<std::string>{"stock.csv:1: unknown column 'colour' (columns: kind, value, qty, tol, power, volts, "
                                 "dielectric, package, bin, note)"});
  CHECK(header("kind,value,qty,Qty\n") == std::vector<std::string>{"stock.csv:1: duplicate column 'qty'"});
  CHECK(header("kind,value\nR,1k\n") == std::vector<std::string>{"stock.csv:1: missing column 'qty'"});
  CHECK(header("").size() == 1);
  try {
    (void)stock("kind,value,qty,colour\n");
  } catch (const CsvError& e) {
    CHECK(std::string(e.what()) == "stock.csv: bad header, nothing imported");
  }
  // A trailing comma in the header (an unnamed, empty column) is harmless; data in it is not.
  CHECK(stock("kind,value,qty,\nR,1k,1,\n").size() == 1);
  CHECK(header("kind,value,qty,\nR,1k,1,oops\n").size() == 1);
  CHECK(stock("kind,value,qty\n").empty());  // a header alone imports nothing
}

TEST_CASE("export then import into a fresh database gives the identical stock") {
  store::testing::TempDir tmp;
  auto a = store::Database::create(tmp.file("a.db"));
  devices::DeviceRecord q;
  q.name = "SQ-410";
  q.kind = devices::DeviceKind::npn;
  q.bjt.hfe = {110, 450, std::nullopt};
  a.put_devices({q});
  auto r = [](double v, int n, std::string bin) {
    Part p;
    p.kind = PartKind::resistor;
    p.value = v;
    p.qty = n;
    p.bin = std::move(bin);
    return p;
  };
  std::vector<Part> in = {r(4700, 10, "A3"), r(4700, 3, "B1"),        r(0.47, 2, "A0"),
                          r(1.5e6, 1, ""),   r(12345.6789, 1, "odd"), r(1.0 / 3.0, 1, "thirds")};
  in[0].tol = units::Tolerance{0.05, 0.05};
  in[0].power_w = 0.25;
  in[0].note = "carbon film, \"blue\"";
  in[1].package = "0207";
  Part c;
  c.kind = PartKind::capacitor;
  c.value = 2.2e-6;
  c.qty = 4;
  c.volts = 6.3;
  c.tol = units::Tolerance{0.1, 0.5};
  c.dielectric = "tantalum";
  c.note = "dipped, bag of ten: \"spares\"";  // one line: line breaks are control characters
  in.push_back(c);
  c.value = 100e-9;
  c.dielectric = "X7R";
  c.qty = 0;  // an empty line is stock too
  in.push_back(c);
  Part t;
  t.kind = PartKind::npn;
  t.device = "SQ-410";
  t.qty = 5;
  t.bin = "T1";
  in.push_back(t);
  a.add_parts(in, "setup");

  const std::string csv = store::write_stock_csv(a.parts());
  auto b = store::Database::create(tmp.file("b.db"));
  b.put_devices(a.device_records());
  b.add_parts(store::parse_stock_csv(csv, "export.csv", {"SQ-410"}), "import");
  const auto pa = a.parts();
  const auto pb = b.parts();
  REQUIRE(pa.size() == pb.size());
  for (std::size_t i = 0; i < pa.size(); ++i) {
    CAPTURE(i);
    CHECK(pa[i].kind == pb[i].kind);
    CHECK(pa[i].value == pb[i].value);  // exactly the same double
    CHECK(pa[i].device == pb[i].device);
    CHECK(pa[i].tol == pb[i].tol);
    CHECK(pa[i].power_w == pb[i].power_w);
    CHECK(pa[i].volts == pb[i].volts);
    CHECK(pa[i].dielectric == pb[i].dielectric);
    CHECK(pa[i].package == pb[i].package);
    CHECK(pa[i].qty == pb[i].qty);
    CHECK(pa[i].bin == pb[i].bin);
    CHECK(pa[i].note == pb[i].note);
  }
  CHECK(store::write_stock_csv(pb) == csv);
  CHECK(csv.find("R,4.7k,10,5%,0.25,,,,A3,\"carbon film, \"\"blue\"\"\"\n") != std::string::npos);
}

// --- devices and pieces ------------------------------------------------------------------------

TEST_CASE("devices: ranges in either order, signs as on a datasheet, defaults for the rest") {
  const auto d = store::parse_devices_csv(
      "name,kind,idss_min,idss_max,idss_typ,vp_min,vp_max,vp_typ,lambda,cgs,cgd,hfe_min,hfe_max,hfe_typ,is,vaf,"
      "cje,cjc,note,tc_idss,tc_vp,vce_sat\n"
      "SJ-101,NJFET,1m,5mA,2.5m,-0.5,-3V,-1.4,0.005,4.5p,1.5pF,,,,,,,,low grade,-0.3%,2m/K,\n"
      "SJ-P31,PJFET,15m,2m,,5,1,,,,,,,,,,,,,,,\n"
      "SQ-410,NPN,,,,,,,,,,450,110,250,1.5e-14,80,6p,3p,,,,0.3\n",
      "devices.csv");
  REQUIRE(d.size() == 3);
  CHECK(d[0].kind == devices::DeviceKind::njfet);
  CHECK(d[0].jfet.idss_a.min == 1e-3);
  CHECK(d[0].jfet.idss_a.max == 5e-3);
  CHECK(d[0].jfet.idss_a.typ == 2.5e-3);
  CHECK(d[0].jfet.vp_v.min == -3.0);  // stored in numeric order
  CHECK(d[0].jfet.vp_v.max == -0.5);
  CHECK(d[0].jfet.cgd_f == 1.5e-12);
  CHECK(d[0].jfet.tc_idss_per_k == doctest::Approx(-0.003));
  CHECK(d[0].jfet.tc_vp_v_per_k == doctest::Approx(0.002));
  CHECK(d[0].note == "low grade");
  CHECK(d[1].kind == devices::DeviceKind::pjfet);
  CHECK(d[1].jfet.idss_a.min == 2e-3);
  CHECK(d[1].jfet.vp_v.min == 1.0);
  CHECK(d[1].jfet.lambda_per_v == 0.0);
  CHECK(d[2].bjt.hfe.min == 110);
  CHECK(d[2].bjt.hfe.max == 450);
  CHECK(d[2].bjt.is_a == 1.5e-14);
  CHECK(d[2].bjt.vaf_v == 80);
  CHECK(d[2].bjt.vce_sat_v == 0.3);
  CHECK(store::parse_devices_csv(store::write_devices_csv(d), "again.csv").size() == 3);
  const auto again = store::parse_devices_csv(store::write_devices_csv(d), "again.csv");
  CHECK(again[0].jfet.tc_idss_per_k == d[0].jfet.tc_idss_per_k);
  CHECK(again[2].bjt.is_a == d[2].bjt.is_a);
  CHECK(store::write_devices_csv(again) == store::write_devices_csv(d));
}

TEST_CASE("devices: maximum ratings are optional magnitudes, kept through an export") {
  const auto d = store::parse_devices_csv(
      "name,kind,idss_min,idss_max,vp_min,vp_max,hfe_min,hfe_max,v_max,v_rev_max,p_max,p_derate\n"
      "J1,PJFET,2m,15m,1,5,,,-25,-25,300m,2.4m\n"  // a P type's ratings as its datasheet signs them
      "Q1,NPN,,,,,100,400,40,6,500mW,\n"
      "Q2,NPN,,,,,100,400,,,,\n",
      "devices.csv");
  REQUIRE(d.size() == 3);
  CHECK(d[0].ratings.v_max_v == 25.0);
  CHECK(d[0].ratings.v_rev_max_v == 25.0);
  CHECK(d[0].ratings.p_max_w == doctest::Approx(0.3));
  CHECK(d[0].ratings.derate_w_per_k == doctest::Approx(2.4e-3));
  // Derating: the rating at 25 C, less 2.4 mW per kelvin above (75 C: 300 - 120 mW).
  CHECK(d[0].ratings.p_max_at(75) == doctest::Approx(0.18));
  CHECK(d[0].ratings.p_max_at(0) == doctest::Approx(0.3));
  // Without a stated derating: linear to zero at 150 C (common practice for small-signal types).
  CHECK(d[1].ratings.p_max_at(87.5) == doctest::Approx(0.25));
  CHECK_FALSE(d[2].ratings.any());
  const auto again = store::parse_devices_csv(store::write_devices_csv(d), "again.csv");
  CHECK(again[0].ratings.derate_w_per_k == d[0].ratings.derate_w_per_k);
  CHECK(store::write_devices_csv(again) == store::write_devices_csv(d));
  const auto bad = problems_of([] {
    (void)store::parse_devices_csv("name,kind,hfe_min,hfe_max,v_max,p_derate\nQ1,NPN,100,400,0,1m\n", "d.csv");
  });
  REQUIRE(bad.size() >= 2);
  CHECK(bad[0].find("v_max 0 must be above 0") != std::string::npos);
  CHECK(bad[1].find("p_derate is given without p_max") != std::string::npos);
}

TEST_CASE("devices: bad rows are all reported") {
  const auto p = problems_of([] {
    (void)store::parse_devices_csv(
        "name,kind,idss_min,idss_max,vp_min,vp_max,hfe_min,hfe_max\n"
        "J1,NJFET,1m,5m,0.5,3,,\n"  // 2: VP positive for N-channel
        "J2,NJFET,1m,,-0.5,-3,,\n"  // 3: idss_max missing
        "Q1,NPN,,,,,100,x\n"        // 4: hfe_max not a number
        "Q2,NPN,1m,,,,100,200\n"    // 5: a JFET figure on a BJT
        "Q3,TRIODE,,,,,,\n"         // 6: unknown kind
        "q1,NPN,,,,,100,200\n",     // 7: duplicate name
        "devices.csv");
  });
  REQUIRE(p.size() >= 6);
  CHECK(p[0].rfind("devices.csv:2: device 'J1': vp_min 0.5 must be negative for an N-channel JFET", 0) == 0);
  bool l3 = false, l4 = false, l5 = false, l6 = false, l7 = false;
  for (const auto& s : p) {
    l3 = l3 || s == "devices.csv:3: idss_max is missing";
    l4 = l4 || s.rfind("devices.csv:4: hfe_max 'x'", 0) == 0;
    l5 = l5 || s == "devices.csv:5: idss_min '1m' given for kind NPN (a JFET figure)";
    l6 = l6 || s == "devices.csv:6: kind 'TRIODE' is not one of NJFET, PJFET, NPN, PNP, OPAMP";
    l7 = l7 || s == "devices.csv:7: name 'q1' already appears on line 4";
  }
  CHECK(l3);
  CHECK(l4);
  CHECK(l5);
  CHECK(l6);
  CHECK(l7);
}

// Invented op-amp types (figures of the usual order for such parts, not any one datasheet's):
// every notation a datasheet uses, stated minima on one and not on the other, the optional
// figures given and left out.
constexpr const char* kOpampCsv =
    "name,kind,channels,vs_min,vs_max,gbw_min,gbw,slew_min,slew,aol_min,aol,pole2,out_drop_hi,out_drop_lo,"
    "out_drop_ohm,iout_max,cm_drop_hi,cm_drop_lo,vos,ib,ios,en,in,iq,v_max,note\n"
    "SA-210,OPAMP,2,10,36V,700k,1.1MHz,0.3V/us,0.5 V/us,25V/mV,200V/mV,2.5M,1.5,1.5,100,25m,2,2,5mV,400n,100n,10n,"
    "0.6p,2m,40,dual bipolar\n"
    "SA-R20,opamp,2.0,2.7,5.5,,1M,,600k,,112dB,,0.02,20m,25R,20mA,-0.1,-100m,6m,10pA,,25nV,,100u,,\n";

TEST_CASE("devices: op-amp rows in every notation; unstated figures stay unstated") {
  const auto d = store::parse_devices_csv(kOpampCsv, "devices.csv");
  REQUIRE(d.size() == 2);
  const auto& a = d[0].opamp;
  CHECK(d[0].kind == devices::DeviceKind::opamp);
  CHECK(a.channels == 2);
  CHECK(a.vs_min_v == 10);
  CHECK(a.vs_max_v == 36);
  CHECK(a.gbw_hz.typ == 1.1e6);
  CHECK(a.gbw_hz.min == 7e5);
  CHECK(a.slew_v_per_s.typ == 5e5);
  CHECK(a.slew_v_per_s.min == 3e5);
  CHECK(a.aol.typ == 2e5);
  CHECK(a.aol.min == 25e3);
  CHECK(a.pole2_hz == 2.5e6);
  CHECK(a.out_drop_ohm == 100);
  CHECK(a.iout_max_a == 25e-3);
  CHECK(a.vos_max_v == 5e-3);
  CHECK(a.ib_max_a == 400e-9);
  CHECK(a.ios_max_a == 100e-9);
  CHECK(a.en_v_rthz == 10e-9);
  CHECK(a.in_a_rthz == 0.6e-12);
  CHECK(a.iq_a == 2e-3);
  CHECK(d[0].ratings.v_max_v == 40);
  CHECK(d[0].note == "dual bipolar");
  const auto& b = d[1].opamp;
  CHECK(b.slew_v_per_s.typ == 6e5);  // a bare figure is V/s
  CHECK(b.aol.typ == doctest::Approx(std::pow(10.0, 112.0 / 20.0)));
  CHECK(b.out_drop_lo_v == 20e-3);
  CHECK(b.cm_drop_hi_v == -0.1);
  CHECK(b.cm_drop_lo_v == -0.1);
  for (const auto& unstated : {b.gbw_hz.min, b.slew_v_per_s.min, b.aol.min, b.pole2_hz, b.ios_max_a, b.in_a_rthz})
    CHECK_FALSE(unstated);
  CHECK_FALSE(d[1].ratings.any());
}

TEST_CASE("devices: import, export, import of op-amps beside transistors gives the same file") {
  std::string text = kOpampCsv;
  // A transistor row in the same file (its op-amp columns empty).
  text += "SQ-410,NPN,,,,,,,,,,,,,,,,,,,,,,,40,npn\n";
  // The BJT columns put in front of the header and of every row.
  std::string file;
  std::istringstream in(text);
  std::string line;
  bool header = true;
  while (std::getline(in, line)) {
    file += (header ? "hfe_min,hfe_max," : line.starts_with("SQ-410") ? "110,450," : ",,") + line + "\n";
    header = false;
  }
  const auto first = store::parse_devices_csv(file, "devices.csv");
  REQUIRE(first.size() == 3);
  const std::string written = store::write_devices_csv(first);
  // The op-amp columns come after the ratings, where no earlier file had columns.
  const auto head = written.substr(0, written.find('\n'));
  CHECK(head.find(",note,v_max,v_rev_max,p_max,p_derate,channels,vs_min,") != std::string::npos);
  CHECK(head.ends_with(",ios,en,in,iq"));
  const auto second = store::parse_devices_csv(written, "again.csv");
  CHECK(store::write_devices_csv(second) == written);
  // Through the database as well: the table's op-amp columns keep every figure.
  store::testing::TempDir tmp;
  auto db = store::Database::create(tmp.file("stock.db"));
  db.put_devices(second);
  CHECK(store::write_devices_csv(db.device_records()) == written);
  const auto back = db.device("sa-r20");
  REQUIRE(back);
  CHECK_FALSE(back->opamp.gbw_hz.min);
  CHECK(back->opamp.channels == 2);
  // A transistor row keeps its op-amp figures at the defaults, and the other way round.
  CHECK(db.device("SQ-410")->opamp.gbw_hz.typ == 0);
  CHECK(back->bjt.hfe.max == 0);
}

TEST_CASE("devices: an op-amp row with transistor figures, or the other way round, is a bad row") {
  const auto p = problems_of([] {
    (void)store::parse_devices_csv(
        "name,kind,hfe_min,hfe_max,vp_min,channels,vs_min,vs_max,gbw,slew,aol,out_drop_hi,out_drop_lo,out_drop_ohm,"
        "iout_max,cm_drop_hi,cm_drop_lo,vos,ib\n"
        "SA-1,OPAMP,,,,2,3,32,1M,0.5V/us,100dB,1.5,0.02,150,20m,1.5,-0.3,5m,250n\n"     // 2: good
        "SA-2,OPAMP,100,,,2,3,32,1M,0.5V/us,100dB,1.5,0.02,150,20m,1.5,-0.3,5m,250n\n"  // 3: hfe_min
        "SA-3,OPAMP,,,-1,2,3,32,1M,0.5V/us,100dB,1.5,0.02,150,20m,1.5,-0.3,5m,250n\n"   // 4: vp_min
        "Q1,NPN,100,400,,2,,,,,,,,,,,,,\n"                                              // 5: channels on a BJT
        "SA-4,OPAMP,,,,two,3,32,1M,0.5V,1M,1.5,0.02,150,20m,1.5,-0.3,5m,250n\n"         // 6: channels, slew
        "SA-5,OPAMP,,,,4,3,32,1M,0.5V/us,100dB,1.5,0.02,150,20m,1.5,-0.3,5m,\n"         // 7: ib missing
        "SA-6,OPAMP,,,,3,3,32,1M,0.5V/us,0.5,1.5,0.02,150,20m,1.5,-0.3,5m,250n\n",      // 8: channels, aol
        "devices.csv");
  });
  CHECK(p == std::vector<std::string>{
                 "devices.csv:3: hfe_min '100' given for kind OPAMP (a BJT figure)",
                 "devices.csv:4: vp_min '-1' given for kind OPAMP (a JFET figure)",
                 "devices.csv:5: channels '2' given for kind NPN (an op-amp figure)",
                 "devices.csv:6: channels 'two' is not a whole number",
                 "devices.csv:6: slew '0.5V': a slew rate is volts per time: write 13V/us, 0.5V/us, or volts per "
                 "second as 13M",
                 "devices.csv:7: ib is missing",
                 "devices.csv:8: device 'SA-6': channels 3 must be 1, 2 or 4 (amplifiers in one package)",
                 "devices.csv:8: device 'SA-6': aol 0.5 must be above 1",
             });
}

TEST_CASE("stock: an OPAMP row names an op-amp type; a transistor's kind with it, or it with a transistor, is bad") {
  auto known = store::parse_devices_csv(kOpampCsv, "devices.csv");
  devices::DeviceRecord q;
  q.name = "SQ-410";
  q.kind = devices::DeviceKind::npn;
  known.push_back(q);
  std::vector<std::size_t> at;
  const auto ok = store::parse_stock_csv("kind,value,qty,bin,package\nOPAMP,sa-210,6,E1,DIP-8\nopamp,SA-R20,0,E3,\n",
                                         "stock.csv", known, &at);
  REQUIRE(ok.size() == 2);
  CHECK(ok[0].kind == PartKind::opamp);
  CHECK(ok[0].device == "SA-210");
  CHECK(ok[0].qty == 6);  // packages
  CHECK(at == std::vector<std::size_t>{2, 3});
  const auto again = store::parse_stock_csv(store::write_stock_csv(ok), "again.csv", known);
  CHECK(store::write_stock_csv(again) == store::write_stock_csv(ok));
  const auto p = problems_of([&] {
    (void)store::parse_stock_csv(
        "kind,value,qty,tol\nOPAMP,SQ-410,2,\nNPN,SA-210,1,\nOPAMP,SA-210,1,5%\nOPAMP,SA-999,1,\nOPAMP,4k7,1,\n",
        "stock.csv", known);
  });
  CHECK(p == std::vector<std::string>{
                 "stock.csv:2: value 'SQ-410' is a device of kind NPN, not OPAMP",
                 "stock.csv:3: value 'SA-210' is a device of kind OPAMP, not NPN",
                 "stock.csv:4: tol 5% given for kind OPAMP",
                 "stock.csv:5: value 'SA-999' is not a device in the device list (import it first with devices import)",
                 "stock.csv:6: value '4k7' is not a device in the device list (import it first with devices import)",
             });
}

TEST_CASE("pieces: percentages or fractions, checked against the device kind") {
  const auto devs = store::parse_devices_csv(
      "name,kind,idss_min,idss_max,vp_min,vp_max,hfe_min,hfe_max\nSJ-101,NJFET,1m,5m,-0.5,-3,,\n"
      "SQ-410,NPN,,,,,110,450\n",
      "devices.csv");
  const auto pieces = store::parse_pieces_csv(
      "label,device,idss,vp,hfe,uncertainty,note\nJ1,sj-101,2.9m,-1.45,,3%,bench\nQ3,SQ-410,,,287,0.05,\n"
      "J2,SJ-101,1.6m,,,,\n",
      "pieces.csv", devs);
  REQUIRE(pieces.size() == 3);
  CHECK(pieces[0].device == "SJ-101");
  CHECK(pieces[0].idss_a == 2.9e-3);
  CHECK(pieces[0].vp_v == -1.45);
  CHECK(pieces[0].uncertainty == doctest::Approx(0.03));
  CHECK(pieces[1].hfe == 287);
  CHECK(pieces[1].uncertainty == 0.05);
  CHECK(pieces[2].uncertainty == 0.03);  // the default
  const auto again = store::parse_pieces_csv(store::write_pieces_csv(pieces), "again.csv", devs);
  CHECK(store::write_pieces_csv(again) == store::write_pieces_csv(pieces));

  const auto p = problems_of([&] {
    (void)store::parse_pieces_csv(
        "label,device,idss,vp,hfe,uncertainty\n"
        "J1,SJ-101,2m,1.2,,3%\n"  // 2: vp sign
        "J2,SJ-999,2m,,,\n"       // 3: unknown device
        "J3,SJ-101,2m,,,3\n"      // 4: "3" without % is 300 %
        "Q1,SQ-410,,-0.6,200,\n"  // 5: vp on a BJT
        "j3,SJ-101,2m,,,\n",      // 6: duplicate label
        "pieces.csv", devs);
  });
  REQUIRE(p.size() == 5);
  CHECK(p[0] == "pieces.csv:2: piece 'J1': vp 1.2 must be negative for NJFET 'SJ-101'");
  CHECK(p[1].rfind("pieces.csv:3: device 'SJ-999' is not in the device list", 0) == 0);
  CHECK(p[2] == "pieces.csv:4: uncertainty '3' reads as 300 %; write 3% if that is meant");
  CHECK(p[3] == "pieces.csv:5: piece 'Q1': idss/vp given for BJT 'SQ-410'");
  CHECK(p[4] == "pieces.csv:6: label 'j3' already appears on line 4");
}

TEST_CASE("the demo shelf files parse and import cleanly") {
  const std::filesystem::path demo = std::filesystem::path(SHELFSTAGE_SOURCE_DIR) / "data-demo";
  const std::string devices_text = read_file(demo / "devices.csv");
  if (devices_text.empty()) return;  // the demo data is written elsewhere; nothing to check yet
  const auto devs = store::parse_devices_csv(devices_text, "devices.csv");
  CHECK_FALSE(devs.empty());
  const auto parts = store::parse_stock_csv(read_file(demo / "stock.csv"), "stock.csv", devs);
  CHECK_FALSE(parts.empty());
  const auto pieces = store::parse_pieces_csv(read_file(demo / "pieces.csv"), "pieces.csv", devs);
  store::testing::TempDir tmp;
  auto db = store::Database::create(tmp.file("demo.db"));
  db.put_devices(devs);
  db.add_parts(parts, "demo");
  db.add_pieces(pieces);
  CHECK(db.check().ok());
}

// --- text at the door, encodings, bad text on the way out -----------------------------------------

TEST_CASE("stock: every field must be clean UTF-8; the fault is named by column, line, and byte") {
  // "Fach ä" as Latin-1: E4 stands alone where UTF-8 needs a sequence (RFC 3629).
  const std::string latin1 = "kind,value,qty,bin,note\nR,1k,5,Fach \xE4,\nR,2k2,5,A1,\"say \"\"\xFF\"\"\"\n";
  try {
    (void)stock(latin1);
    FAIL("a Latin-1 file was accepted");
  } catch (const CsvError& e) {
    CHECK(std::string(e.what()) == "stock.csv: 2 bad rows, nothing imported (some text is not UTF-8)");
    CHECK(e.not_utf8());
    REQUIRE(e.problems().size() == 2);
    // Byte 37 of the file is E4 (line 2 starts at byte 25); in the quoted note of line 3 the
    // doubled quote counts twice in the file and once in the field.
    CHECK(e.problems()[0] ==
          "stock.csv:2: bin 'Fach \\xE4': byte 6 of the field (byte 37 of the file) is not UTF-8 (0xE4)");
    CHECK(e.problems()[1] ==
          "stock.csv:3: note 'say \"\\xFF\"': byte 6 of the field (byte 58 of the file) is not UTF-8 (0xFF)");
    CHECK(static_cast<unsigned char>(latin1[36]) == 0xE4);
    CHECK(static_cast<unsigned char>(latin1[57]) == 0xFF);
  }
  // Control characters: a NUL in a bin, a line break in a quoted note.
  const auto p = problems_of(
      [&] { (void)stock(std::string("kind,value,qty,bin,note\nR,1k,5,A") + '\0' + ",\nR,1k,5,B,\"two\nlines\"\n"); });
  REQUIRE(p.size() == 2);
  CAPTURE(p[0]);
  CHECK(p[0].starts_with(
      "stock.csv:2: bin 'A\\x00': byte 2 of the field (byte 33 of the file) is a control character (U+0000)"));
  CHECK(p[1].starts_with("stock.csv:3: note 'two\\x0Alines': byte 4 of the field"));
  // Text from any script in UTF-8 is fine.
  CHECK(stock("kind,value,qty,bin,note\nR,1k,5,Schublade Ä3,µ-Bereich 抽屉\n").size() == 1);
}

TEST_CASE("a UTF-16 file is refused as such") {
  const std::string utf16 = std::string("\xFF\xFEk\0i\0n\0d\0", 10);
  try {
    (void)stock(utf16);
    FAIL("a UTF-16 file was read");
  } catch (const CsvError& e) {
    REQUIRE(e.problems().size() == 1);
    CHECK(e.problems()[0] ==
          "stock.csv:1: the file is UTF-16 (it starts with a UTF-16 byte-order mark); save it as UTF-8");
  }
}

TEST_CASE("parse_stock_csv tells the line of each part; every wrong-kind transistor row is named") {
  devices::DeviceRecord j;
  j.name = "SJ-101";
  j.kind = devices::DeviceKind::njfet;
  std::vector<std::size_t> where;
  const auto parts = store::parse_stock_csv("kind,value,qty\nR,1k,1\n\nR,2k,1\n\"R\",\"3k\",\"1\"\n", "s.csv",
                                            std::vector<devices::DeviceRecord>{j}, &where);
  CHECK(parts.size() == 3);
  CHECK(where == std::vector<std::size_t>{2, 4, 5});
  const auto p = problems_of([&] {
    (void)store::parse_stock_csv("kind,value,qty\nNPN,SJ-101,1\nPNP,SJ-101,2\nNJFET,SJ-101,3\nNPN,sj-101,4\n", "s.csv",
                                 std::vector<devices::DeviceRecord>{j});
  });
  CHECK(p.size() == 3);
  for (const auto& line : p) CHECK(line.find("is a device of kind NJFET") != std::string::npos);
}

TEST_CASE("bad text a database already holds is written escaped, so the export reads back") {
  Part p;
  p.kind = PartKind::resistor;
  p.value = 4700;
  p.qty = 3;
  p.bin = std::string("A\0\xE9", 3);
  p.note = "ok";
  const std::string csv = store::write_stock_csv({p});
  CHECK(csv.find("A\\x00\\xE9") != std::string::npos);
  CHECK(csv.find('\0') == std::string::npos);
  const auto back = stock(csv);
  REQUIRE(back.size() == 1);
  CHECK(back[0].bin == "A\\x00\\xE9");
}

TEST_CASE("a capacitor of a millifarad or more is exported with its unit, so that it imports again") {
  for (const double farads : {0.0047, 0.001, 1.0, 0.47, 100e-9, 2.2e-6}) {
    CAPTURE(farads);
    Part c;
    c.kind = PartKind::capacitor;
    c.value = farads;
    c.qty = 1;
    const auto back = stock(store::write_stock_csv({c}));
    REQUIRE(back.size() == 1);
    CHECK(back[0].value == farads);
  }
}
