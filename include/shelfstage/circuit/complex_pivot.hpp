// Partial pivoting of complex matrices by |re| + |im| of each candidate pivot, as LAPACK's
// complex factorisations choose theirs (izamax), instead of Eigen's default, the modulus:
// one hypot() per element looked at was a twentieth of a chain request's time (the
// feedback pairs' band edges and the exact solver's AC sweeps), and the 1-norm picks a
// pivot within a factor of sqrt(2) of the largest modulus, which partial pivoting needs.
//
// Every file that factorises a complex Eigen matrix includes this right after Eigen, so that
// each instantiation of the factorisation sees the one definition.
#pragma once
#include <Eigen/Core>
#include <cmath>
#include <complex>

namespace Eigen::internal {

template <>
struct scalar_score_coeff_op<std::complex<double>> {
  using result_type = double;
  double operator()(const std::complex<double>& a) const { return std::abs(a.real()) + std::abs(a.imag()); }
};

template <>
struct functor_traits<scalar_score_coeff_op<std::complex<double>>> {
  enum { Cost = 3 * NumTraits<double>::AddCost, PacketAccess = false };
};

}  // namespace Eigen::internal
