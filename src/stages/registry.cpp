// The one place every topology is registered: adding a topology is one line here.
#include <array>

#include "shelfstage/stages/topology.hpp"

namespace shelfstage::stages {

const Topology& jfet_cs_self();
const Topology& jfet_cs_divider();
const Topology& jfet_follower();
const Topology& bjt_ce_divider();
const Topology& bjt_follower();
const Topology& jfet_boot_follower();
const Topology& bjt_ce_shunt();
const Topology& bjt_fb_pair();
const Topology& jfet_fb_pair();
const Topology& bjt_fb_pair_same();
const Topology& opamp_noninv();
const Topology& opamp_inv();
const Topology& opamp_buffer();
const Topology& opamp_noninv_split();
const Topology& opamp_inv_split();
const Topology& opamp_buffer_split();

std::span<const Topology* const> registry() {
  static const std::array all = {
      &jfet_cs_self(), &jfet_cs_divider(),    &jfet_follower(),   &bjt_ce_divider(),
      &bjt_follower(), &jfet_boot_follower(), &bjt_ce_shunt(),    &bjt_fb_pair(),
      &jfet_fb_pair(), &bjt_fb_pair_same(),   &opamp_noninv(),    &opamp_inv(),
      &opamp_buffer(), &opamp_noninv_split(), &opamp_inv_split(), &opamp_buffer_split(),
  };
  return all;
}

const Topology* find_topology(std::string_view name) {
  for (const Topology* t : registry())
    if (t->name() == name) return t;
  return nullptr;
}

std::string topology_names(std::string_view sep) {
  std::string out;
  for (const Topology* t : registry()) {
    if (!out.empty()) out += sep;
    out += t->name();
  }
  return out;
}

}  // namespace shelfstage::stages
