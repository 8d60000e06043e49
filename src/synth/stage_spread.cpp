// The pieces of a stage's one or two devices (stage_spread.hpp).
#include "shelfstage/synth/stage_spread.hpp"

#include "shelfstage/synth/design.hpp"

#include <fmt/format.h>

namespace shelfstage::synth {

namespace {

StagePiece join(const devices::PieceFigures& a, const devices::PieceFigures* b) {
  StagePiece p;
  p.first = a;
  if (!b) {
    p.tag = a.tag;
    return p;
  }
  p.second = *b;
  p.tag = fmt::format("Q1 {}, Q2 {}", a.tag, b->tag);
  return p;
}

}  // namespace

StageSpread::StageSpread(devices::DeviceSpread first, std::optional<devices::DeviceSpread> second)
    : first_(std::move(first)), second_(std::move(second)) {
  const devices::PieceFigures* n2 = second_ ? &second_->nominal() : nullptr;
  nominal_ = join(first_.nominal(), n2);
  for (const auto& a : first_.corners()) corners_.push_back(join(a, n2));
  if (second_) {
    for (const auto& b : second_->corners()) {
      corners_.push_back(join(first_.nominal(), &b));
      for (const auto& a : first_.corners()) corners_.push_back(join(a, &b));
    }
  }
}

std::vector<StagePiece> StageSpread::samples(std::size_t n, std::uint64_t seed) const {
  const auto a = first_.samples(n, seed);
  std::vector<devices::PieceFigures> b;
  if (second_) b = second_->samples(n, seed ^ 0x9E3779B97F4A7C15ULL);
  std::vector<StagePiece> out;
  out.reserve(a.size());
  for (std::size_t i = 0; i < a.size(); ++i) out.push_back(join(a[i], second_ ? &b[i] : nullptr));
  return out;
}

std::string StageSpread::description() const {
  if (!second_) return first_.description();
  return fmt::format("{}; Q2: {}", first_.description(), second_->description());
}

stages::Transistor make_transistor(const StageSpread& s, const StagePiece& p, double celsius) {
  stages::Transistor q;
  q = make_transistor(s.first(), p.first, celsius);
  if (s.second() && p.second) {
    q.paired = true;
    q.bjt2 = s.second()->bjt(*p.second, celsius);
  }
  return q;
}

}  // namespace shelfstage::synth
