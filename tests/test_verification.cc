// Code verification (manufactured solution) and conservation checks of the
// drift-diffusion solver.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "geometry/ids.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"
#include "tests/strip_mesh.h"

#include <deal.II/base/quadrature_lib.h>
#include <deal.II/fe/fe_values.h>

#include <gtest/gtest.h>

#include <cmath>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;

namespace
{
  constexpr double pi = 3.14159265358979323846;
}

// Method of manufactured solutions for the Poisson part (P. J. Roache,
// Verification and Validation in Computational Science and Engineering,
// 1998, ch. 3): psi_ex = A + B x/L + C sin(pi x/L) cos(pi y/t) (in kT/q)
// satisfies the contact values and the zero normal field at y = 0, t; a
// fixed charge makes it the exact equilibrium solution. Q1 elements
// converge in L2 with order 2 (e.g. S. C. Brenner, L. R. Scott, The
// Mathematical Theory of Finite Element Methods, 3rd ed., 2008, thm. 5.4.8).
TEST(ManufacturedSolution, PoissonConvergesWithSecondOrder)
{
  const double L = 2.0, t = 1.0, C = 5.0;
  Material     m;
  m.band_gap = 1.0;
  m.Nc = m.Nv = 1e19;
  ContactParameters e, h;
  e.model = h.model = "ohmic";
  e.work_function   = 4.5;
  h.work_function   = 4.6;
  std::vector<double> errors;
  for (const unsigned n : {8u, 16u, 32u})
    {
      dealii::Triangulation<2> tria;
      test_support::make_uniform_strip(tria, L, t, n, n / 2);
      DeviceModel dev(300, {{ids::absorber, m}}, {}, e, h, SurfaceParameters(), SurfaceParameters(), nullptr);
      const double Vt = dev.scaling.Vt;
      const double A = -e.work_function / Vt, B = (e.work_function - h.work_function) / Vt;
      auto psi_ex = [=](double x, double y) { return A + B * x / L + C * std::sin(pi * x / L) * std::cos(pi * y / t); };
      const ScaledRegion r = dev.region(ids::absorber);
      const double       N0 = dev.scaling.N0;
      dev.fixed_charge = [=](double x, double y) {
        const double lap = -C * std::sin(pi * x / L) * std::cos(pi * y / t) * (pi * pi / (L * L) + pi * pi / (t * t));
        const double psi = psi_ex(x, y);
        const double rho = -r.eps * lap - (std::exp(-psi + r.a_p) - std::exp(psi + r.a_n) + r.doping);
        return rho * N0;
      };
      NumericsParameters num;
      num.tolerance      = 1e-12;
      num.max_iterations = 200;
      num.quadrature     = 4;
      DriftDiffusionSolver solver(tria, dev, num);
      ASSERT_TRUE(solver.solve_equilibrium().converged);

      const dealii::QGauss<2> quad(5);
      dealii::FEValues<2> fv(solver.dof_handler().get_fe(), quad,
                             dealii::update_values | dealii::update_quadrature_points | dealii::update_JxW_values);
      std::vector<double> values(quad.size());
      double              err2 = 0;
      for (const auto &cell : solver.dof_handler().active_cell_iterators())
        {
          fv.reinit(cell);
          fv[dealii::FEValuesExtractors::Scalar(0)].get_function_values(solver.state(), values);
          for (unsigned q = 0; q < quad.size(); ++q)
            {
              const auto &x = fv.quadrature_point(q);
              err2 += std::pow(values[q] - psi_ex(x[0], x[1]), 2) * fv.JxW(q);
            }
        }
      errors.push_back(std::sqrt(err2));
    }
  for (unsigned k = 1; k < errors.size(); ++k)
    {
      const double order = std::log2(errors[k - 1] / errors[k]);
      std::printf("L2 error %.3e -> %.3e: observed order %.3f\n", errors[k - 1], errors[k], order);
      EXPECT_NEAR(order, 2.0, 0.15);
    }
}

// Charge conservation: the currents through both contacts agree at every
// bias (steady state, no other current path); at short circuit J_sc <=
// q int G, and J_sc -> q int G for very long lifetimes with contacts that
// take only their majority carrier (analytic: every pair is collected).
TEST(Conservation, ContactCurrentsAgreeAndShortCircuitBound)
{
  dealii::Triangulation<2> tria;
  test_support::make_small_period(tria, 0.5);
  for (const double tau : {1e-7, 1.0})
    {
      Material m;
      m.tau_n = m.tau_p = tau;
      ContactParameters e, h;
      e.work_function = 4.0, e.S_n = 1e7, e.S_p = 0;
      h.work_function = 5.4, h.S_n = 0, h.S_p = 1e7;
      DeviceModel dev(300, {{ids::absorber, m}}, {ids::absorber}, e, h, SurfaceParameters(),
                      SurfaceParameters(), [](double, double y) { return 1e21 * std::exp(-(0.4 - y) / 0.15); });
      NumericsParameters num;
      num.tolerance = 1e-11;
      DriftDiffusionSolver solver(tria, dev, num);
      ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
      const double generated = solver.generation_current();
      const double Jsc       = solver.terminal_current().total();
      std::printf("tau = %g s: Jsc = %.6f mA/cm2, q int G = %.6f mA/cm2\n", tau, Jsc, generated);
      EXPECT_LE(Jsc, generated * (1 + 1e-9));
      if (tau == 1.0)
        {
          EXPECT_NEAR(Jsc / generated, 1.0, 1e-3);
        }
      for (const double V : {0.0, 0.3, 0.6, 0.9, 1.1})
        {
          ASSERT_TRUE(move_to(solver, V, 1.0, 8).converged);
          const TerminalCurrent c = solver.terminal_current();
          const double          Je = c.electron_contact_electron + c.electron_contact_hole;
          std::printf("  V = %.1f V: hole contact %.9e, electron contact %.9e mA/cm2\n", V, c.total(), Je);
          EXPECT_LE(std::abs(c.total() - Je), 1e-6 * std::max(std::abs(c.total()), generated));
        }
    }
}
