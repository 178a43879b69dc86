// Anderson mixing (fem/anderson.h) on a linear fixed-point iteration.

#include "fem/anderson.h"

#include <gtest/gtest.h>

#include <cmath>

using backcomb::fem::AndersonMixing;

// Richardson's iteration u <- u + w (b - A u) for a diagonal A with three
// distinct eigenvalues. Anderson mixing without truncation of a linear
// iteration is GMRES (H. F. Walker, P. Ni, SIAM J. Numer. Anal. 49 (2011)
// 1715, Theorem 2.2), and GMRES ends in at most as many steps as A has
// distinct eigenvalues (Y. Saad, Iterative Methods for Sparse Linear
// Systems, 2nd ed., 2003, Sec. 6.11): so depth 4 reaches the solution to
// rounding at the fourth mixed step, while the plain iteration contracts
// by max |1 - w lambda| = 0.7 per step.
TEST(Anderson, MixingALinearIterationIsGmres)
{
  const unsigned         n = 60;
  const double           w = 0.3;
  dealii::Vector<double> lambda(n), b(n), exact(n);
  for (unsigned i = 0; i < n; ++i)
    {
      lambda(i) = i % 3 == 0 ? 1.0 : i % 3 == 1 ? 2.0 : 4.0;
      b(i)      = std::sin(1.0 + i);
      exact(i)  = b(i) / lambda(i);
    }
  auto f = [&](const dealii::Vector<double> &u) {
    dealii::Vector<double> r(n);
    for (unsigned i = 0; i < n; ++i)
      r(i) = w * (b(i) - lambda(i) * u(i));
    return r;
  };
  auto error = [&](const dealii::Vector<double> &u) {
    dealii::Vector<double> e = u;
    e -= exact;
    return e.l2_norm() / exact.l2_norm();
  };

  dealii::Vector<double> mixed(n), plain(n);
  AndersonMixing         mixing(4);
  for (unsigned k = 0; k < 5; ++k)
    {
      if (k == 0)
        mixing.restart(mixed, f(mixed));
      else
        mixing.add(mixed, f(mixed));
      mixed += mixing.step();
      plain += f(plain);
      std::printf("step %u: error mixed %.3e, plain %.3e\n", k + 1, error(mixed), error(plain));
    }
  EXPECT_LT(error(mixed), 1e-10);
  EXPECT_GT(error(plain), 0.1);

  // Depth 0 is the plain iteration.
  dealii::Vector<double> u(n);
  AndersonMixing         none(0);
  none.restart(u, f(u));
  u += none.step();
  none.add(u, f(u));
  dealii::Vector<double> v(n);
  v += f(v);
  v += f(v);
  u += none.step();
  u -= v;
  EXPECT_EQ(u.l2_norm(), 0.0);
}
