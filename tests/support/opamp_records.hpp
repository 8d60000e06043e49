// Invented op-amp records for tests, in the manner of common datasheets (the demo's types,
// data-demo/devices.csv, restated; figures of the usual order for such parts, from memory).
#pragma once
#include "shelfstage/devices/record.hpp"

namespace shelfstage::test {

using devices::OpampParams;

// A dual bipolar-input type as the demo states it (SA-210): stated minima for all three
// dynamic figures, an offset current, a second pole.
inline OpampParams bipolar_input() {
  OpampParams o;
  o.channels = 2;
  o.vs_min_v = 10;
  o.vs_max_v = 36;
  o.gbw_hz = {1.1e6, 7e5};
  o.slew_v_per_s = {5e5, 3e5};
  o.aol = {2e5, 2.5e4};
  o.pole2_hz = 2.5e6;
  o.out_drop_hi_v = o.out_drop_lo_v = 1.5;
  o.out_drop_ohm = 100;
  o.iout_max_a = 20e-3;
  o.cm_drop_hi_v = o.cm_drop_lo_v = 2;
  o.vos_max_v = 5e-3;
  o.ib_max_a = 400e-9;
  o.ios_max_a = 100e-9;
  o.en_v_rthz = 10e-9;
  o.iq_a = 2e-3;
  return o;
}

// A JFET-input type like SA-430 (no stated minima, picoamperes of bias) with its offset
// current left unstated: the two inputs may then differ by the whole bias current.
inline OpampParams jfet_input() {
  OpampParams o;
  o.channels = 4;
  o.vs_min_v = 10;
  o.vs_max_v = 36;
  o.gbw_hz.typ = 4e6;
  o.slew_v_per_s.typ = 13e6;
  o.aol.typ = 1e5;
  o.out_drop_hi_v = o.out_drop_lo_v = 1.5;
  o.cm_drop_hi_v = 0.5;
  o.cm_drop_lo_v = 3;
  o.vos_max_v = 10e-3;
  o.ib_max_a = 200e-12;
  return o;
}

}  // namespace shelfstage::test
