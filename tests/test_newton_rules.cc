// The update limit and the convergence test of the Newton iteration
// (fem/newton_rules.h), and the slope one open-circuit level hands to the
// next (fem/operating_points.h).

#include "fem/newton_rules.h"
#include "fem/operating_points.h"

#include <gtest/gtest.h>

#include <cmath>

using backcomb::fem::converged_by_rate;
using backcomb::fem::limited_update;

// Newton's method for exp(x) = c, the balance of a carrier density
// exp(x) (x its potential in kT/q) against a required density c, from a
// start where the density is e^-36 of c: the update there is
// c exp(-x0) - 1 = e^36 - 1, and its logarithm ln(1 + update) = 36 is the
// exact distance to the root ln c. With the logarithmic limit the first
// step lands on the root (to rounding); with the plain limit of 4 the
// iteration walks 4 per step and needs at least 9 steps before its updates
// fall below the limit.
TEST(NewtonRules, LogarithmOfAHugeUpdateIsTheDistanceToTheRoot)
{
  const double c    = std::exp(36.0);
  const double root = std::log(c);
  auto steps = [&](const bool logarithmic, double &x) {
    x = 0;
    for (int k = 1; k <= 100; ++k)
      {
        const double update = (c - std::exp(x)) / std::exp(x); // -f/f'
        x += logarithmic ? limited_update(update, 4.0) : std::clamp(update, -4.0, 4.0);
        if (std::abs(x - root) < 1e-12)
          return k;
      }
    return 1000;
  };
  double x_log = 0, x_clamp = 0;
  EXPECT_EQ(steps(true, x_log), 1);
  EXPECT_NEAR(x_log, 36.0, 1e-12);
  EXPECT_GE(steps(false, x_clamp), 9);
  EXPECT_NEAR(x_clamp, 36.0, 1e-12);
}

// The limit is the plain clamp up to exp(limit) - 1, continuous there,
// and keeps the sign of the update.
TEST(NewtonRules, LimitIsTheClampBelowExpOfTheLimit)
{
  const double L = 4.0;
  EXPECT_EQ(limited_update(0.3, L), 0.3);
  EXPECT_EQ(limited_update(-3.9, L), -3.9);
  EXPECT_EQ(limited_update(20.0, L), L);
  EXPECT_EQ(limited_update(-50.0, L), -L);
  const double edge = std::exp(L) - 1;
  EXPECT_NEAR(limited_update(edge * (1 + 1e-12), L), L, 1e-9);
  EXPECT_NEAR(limited_update(-1e10, L), -std::log1p(1e10), 1e-12);
}

// A linearly converging iteration, error e_k = e0 q^k, takes the updates
// d_k = e_k - e_{k+1} = e_k (1 - q). The rule may stop only where the error
// left after the last update, e_{k+1} = d_k q / (1 - q) (the geometric
// series), is below a third of the tolerance, and never after the plain
// test d_k < tolerance; at q = 0.01 from e0 = 1e-4 it stops one step
// earlier (d_2 = 9.9e-9 leaves 1e-10).
TEST(NewtonRules, ConvergedByRateStopsOnlyBelowATolerance)
{
  const double tol = 1e-9;
  for (const double q : {0.01, 0.05, 0.1, 0.2, 0.24})
    {
      const double e0 = 1e-4;
      int          by_rate = -1, plain = -1;
      for (int k = 1; k < 60 && (by_rate < 0 || plain < 0); ++k)
        {
          const double previous = e0 * std::pow(q, k - 1) * (1 - q);
          const double now      = e0 * std::pow(q, k) * (1 - q);
          if (by_rate < 0 && converged_by_rate(previous, now, tol))
            {
              by_rate = k;
              EXPECT_LT(e0 * std::pow(q, k + 1), tol / 3 * (1 + 1e-9)) << "q = " << q;
            }
          if (plain < 0 && now < tol)
            plain = k;
        }
      ASSERT_GT(by_rate, 0) << "q = " << q;
      EXPECT_LE(by_rate, plain) << "q = " << q;
      if (q == 0.01)
        {
          EXPECT_EQ(by_rate, plain - 1);
        }
    }
  // No rate from a slow or growing pair, nor from a clamped first update
  // followed by a small one (a huge update, then 1: the ratio 3e-16 says
  // nothing of the distance left).
  EXPECT_FALSE(converged_by_rate(1e-6, 0.3e-6, tol));
  EXPECT_FALSE(converged_by_rate(1e-9, 2e-9, tol));
  EXPECT_FALSE(converged_by_rate(3.7e15, 1.0, tol));
  EXPECT_FALSE(converged_by_rate(0.0, 0.0, tol));
}

// A level whose secant points are 1e-9 V apart (it started at its own V_oc)
// hands on its starting slope, not the difference of two currents at the
// solver's tolerance (here of the wrong sign); points 30 mV apart hand on
// their secant.
TEST(NewtonRules, OpenCircuitLevelHandsOnASlopeFromPointsApart)
{
  using backcomb::fem::next_level_slope;
  EXPECT_EQ(next_level_slope({1.2554206387, 1.2554206397}, {3e-12, 5e-12}, -55.0), -55.0);
  EXPECT_NEAR(next_level_slope({1.224, 1.196, 1.197}, {-1.13e-2, 3.6e-4, 5.7e-7}, -55.0),
              (5.7e-7 + 1.13e-2) / (1.197 - 1.224), 1e-12);
}
