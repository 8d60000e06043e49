// Root finding the stage evaluators share. Private to the stages layer.
#pragma once
#include <cmath>

namespace shelfstage::stages::detail {

/// A bracket of a root of f: the ends and f's values there, on either side of zero.
struct Bracket {
  double lo = 0, f_lo = 0, hi = 0, f_hi = 0;
};

/// Narrows b on f by regula falsi with the Illinois step (an end kept twice in a row has its
/// value halved, so that the other end moves as well) until it is at most `width` wide or
/// `steps` evaluations are spent. f may rise or fall across the bracket: a point whose value
/// has the high end's sign replaces the high end. With bisect_every > 0, every such step is a
/// halving instead, so that the bracket shrinks whatever f does; a secant point that is not
/// strictly inside (an end's value at zero exactly, or a NaN) is the midpoint as well.
/// (Transfer::level_for: THD against the input; opamp_margin: the loop gain against f.)
template <class F>
void illinois(Bracket& b, const F& f, double width, int steps, int bisect_every = 0) {
  const bool rises = !(b.f_lo > 0);
  int side = 0;  // the end replaced last: +1 high, -1 low
  for (int i = 0; i < steps && b.hi - b.lo > width; ++i) {
    const bool halve = bisect_every > 0 && i % bisect_every == bisect_every - 1;
    double x = halve || !(std::abs(b.f_hi - b.f_lo) > 0) ? 0.5 * (b.lo + b.hi)
                                                         : (b.lo * b.f_hi - b.hi * b.f_lo) / (b.f_hi - b.f_lo);
    if (!(x > b.lo && x < b.hi)) x = 0.5 * (b.lo + b.hi);
    const double v = f(x);
    if ((v > 0) == rises) {
      b.hi = x;
      b.f_hi = v;
      if (side == 1) b.f_lo *= 0.5;
      side = 1;
    } else {
      b.lo = x;
      b.f_lo = v;
      if (side == -1) b.f_hi *= 0.5;
      side = -1;
    }
  }
}

}  // namespace shelfstage::stages::detail
