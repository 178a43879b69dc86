// Two rules of the Newton iteration (fem/drift_diffusion.cc, newton()),
// kept apart so that they can be tested alone. Potentials are in kT/q.
#pragma once

#include <algorithm>
#include <cmath>

namespace backcomb::fem
{
  // The change an unknown takes for Newton's `update`: at most `limit`
  // (update limiting, a few kT/q), except where the update is huge. For a
  // carrier density that is exponentially small, n = n0 exp(d) with d the
  // change of its potential, the linear model asks for n0 d = n1 - n0, so
  // the update is n1/n0 - 1 = exp(d) - 1 and the change it means is
  // ln(1 + |update|). Above exp(limit) - 1 that logarithm is the step;
  // below, the plain limit (the two meet there).
  inline double
  limited_update(const double update, const double limit)
  {
    const double l = std::max(limit, std::log1p(std::abs(update)));
    return std::clamp(update, -l, l);
  }

  // Converged by the contraction rate: the update `now` follows `previous`
  // at the rate q = now / previous; if the iteration contracts at least at
  // that rate, the distance left after applying `now` is at most
  // now q / (1 - q) (the geometric series), which must be below a third of
  // the tolerance, the same bound the plain test (now < tolerance) gives at
  // the rate 1/4. Taken only where the rate is measured in the linear
  // regime: both updates small (`previous` at most 1e-3 kT/q, where the
  // exponentials of the densities change by 0.1 %) and the rate below 1/4;
  // a clamped first step followed by a small one says nothing of the rate.
  inline bool
  converged_by_rate(const double previous, const double now, const double tolerance)
  {
    if (!(previous <= 1e-3) || !(previous > 0))
      return false;
    const double q = now / previous;
    return q < 0.25 && now * q / (1 - q) < tolerance / 3;
  }
} // namespace backcomb::fem
