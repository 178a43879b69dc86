// Anderson mixing of a fixed-point iteration u <- u + f(u) (D. G. Anderson,
// J. ACM 12 (1965) 547; the form of H. F. Walker and P. Ni, SIAM J. Numer.
// Anal. 49 (2011) 1715, eq. (1.2) and Algorithm AA): from the last pairs
// (u_k, f_k) the next step is
//   s = f_k - sum_j gamma_j (Du_j + Df_j),
//   gamma = argmin || f_k - sum_j gamma_j Df_j ||_2,
// with Du_j, Df_j the differences of successive iterates and of their f.
// For a linear map f(u) = b - A u this is GMRES in disguise (ibid., Sec. 4),
// so a linearly converging iteration converges much faster.
//
// The solver mixes chord steps, f(u) = -M^-1 F(u) with the factorisation M
// of an earlier Jacobian: one map while M stays, so the history is
// restarted whenever a new Jacobian is factorised.
#pragma once

#include "fem/blas_lock.h"

#include <deal.II/lac/lapack_full_matrix.h>
#include <deal.II/lac/vector.h>

#include <cmath>
#include <deque>

namespace backcomb::fem
{
  class AndersonMixing
  {
  public:
    explicit AndersonMixing(const unsigned depth)
      : depth(depth)
    {}

    // No pair stored since the last restart.
    bool
    empty() const
    {
      return u_last.size() == 0;
    }

    // A new map (or none mixed yet): the step is f itself.
    void
    restart(const dealii::Vector<double> &u, const dealii::Vector<double> &f)
    {
      du.clear();
      df.clear();
      u_last = u;
      f_last = f;
      s      = f;
    }

    // The next pair of the same map.
    void
    add(const dealii::Vector<double> &u, const dealii::Vector<double> &f)
    {
      if (depth == 0)
        return restart(u, f);
      if (du.size() == depth)
        du.pop_front(), df.pop_front();
      du.push_back(u);
      du.back() -= u_last;
      df.push_back(f);
      df.back() -= f_last;
      u_last = u;
      f_last = f;
      mix();
    }

    // The step from the last u (u_next = u + step()).
    const dealii::Vector<double> &
    step() const
    {
      return s;
    }

  private:
    // gamma from the normal equations, solved by the pseudo-inverse that
    // drops singular values below 1e-10 of the largest (Df nearly
    // dependent: those directions carry no information).
    void
    mix()
    {
      const unsigned                    m = df.size();
      dealii::LAPACKFullMatrix<double> gram(m, m);
      dealii::Vector<double>           rhs(m), gamma(m);
      for (unsigned i = 0; i < m; ++i)
        {
          rhs(i) = df[i] * f_last;
          for (unsigned j = 0; j <= i; ++j)
            gram(i, j) = gram(j, i) = df[i] * df[j];
        }
      s = f_last;
      {
        const BlasTurn                    turn; // LAPACK and BLAS
        const double                      size = gram.frobenius_norm();
        if (!(size > 0) || !std::isfinite(size))
          return;
        gram.compute_inverse_svd(1e-10);
        gram.vmult(gamma, rhs);
      }
      for (unsigned j = 0; j < m; ++j)
        if (std::isfinite(gamma(j)))
          {
            s.add(-gamma(j), du[j]);
            s.add(-gamma(j), df[j]);
          }
    }

    unsigned                           depth;
    std::deque<dealii::Vector<double>> du, df;
    dealii::Vector<double>             u_last, f_last, s;
  };
} // namespace backcomb::fem
