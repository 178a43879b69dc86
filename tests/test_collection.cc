// Local collection probability from the adjoint (transposed-Jacobian)
// solve, checked against the diffusion solution on a strip and against
// finite differences of the terminal current on a comb period.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;

namespace
{
  const double Vt = constants::k_B * 300.0 / constants::q;

  NumericsParameters
  tight()
  {
    NumericsParameters n;
    n.tolerance = 1e-11;
    return n;
  }
} // namespace

// Doped strip with minority-absorbing contacts at both ends, low injection:
// the probability that an electron generated at x reaches either end is
// f_c(x) = cosh((x - g/2)/L) / cosh(g/(2L)): by reciprocity f_c solves the
// adjoint diffusion equation L^2 f'' - f = 0 with f = 1 at the
// minority-absorbing ends (C. Donolato, Appl. Phys. Lett. 46 (1985) 270,
// in one dimension). Its mean, (2L/g) tanh(g/(2L)), is the collected
// fraction of uniform generation (the diffusion-limited strip test); the
// minority density under uniform generation has the complementary shape
// G tau (1 - cosh((x - g/2)/L) / cosh(g/(2L))).
TEST(CollectionProbability, DopedStripMatchesDiffusionSolution)
{
  Material m;
  m.acceptors = 1e16;
  m.mu_n = m.mu_p = 10.0;
  const double D = m.mu_n * Vt;
  m.tau_n = m.tau_p = 1e-8 / D; // L = 1 um
  ContactParameters c;
  c.model         = "ohmic";
  c.work_function = m.electron_affinity + m.band_gap - Vt * std::log(m.Nv / m.acceptors);
  const double g  = 5.0; // g/L = 5
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, g, 1.0, 0.0, 0.002, 1.1, 0.05);
  DeviceModel dev(300, {{ids::absorber, m}}, {ids::absorber}, c, c, SurfaceParameters(),
                  SurfaceParameters(), [](double, double) { return 1e16; });
  DriftDiffusionSolver solver(tria, dev, tight());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const std::vector<double>    w  = solver.electron_collection_weights();
  const dealii::Vector<double> fc = solver.collection_probability(&w);

  double worst = 0;
  std::vector<dealii::types::global_dof_index> idx(12);
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    {
      cell->get_dof_indices(idx);
      for (unsigned v = 0; v < 4; ++v)
        {
          const double x     = cell->vertex(v)[0];
          // The contact nodes themselves belong to the contacts (their
          // generation goes straight into the contact current).
          if (x < 1e-9 || x > g - 1e-9)
            continue;
          const double exact = std::cosh(x - 0.5 * g) / std::cosh(0.5 * g);
          if (std::abs(fc[idx[3 * v]] - exact) > worst && std::getenv("BACKCOMB_DEBUG"))
            std::printf("x %.4f fc %.5f (n %.5f p %.5f) exact %.5f\n", x, fc[idx[3 * v]], fc[idx[3 * v + 1]],
                        fc[idx[3 * v + 2]], exact);
          worst = std::max(worst, std::abs(fc[idx[3 * v]] - exact));
        }
    }
  std::printf("largest |f_c - diffusion solution| = %.2e\n", worst);
  EXPECT_LT(worst, 0.01);
  // Linear problem: q int G f_c = collected current.
  const TerminalCurrent t = solver.terminal_current();
  EXPECT_NEAR(solver.collected_current(fc) / (t.electron_contact_electron - t.electron), 1.0, 1e-3);
}

namespace
{
  struct Spot
  {
    double x, y;
  };

  // A small comb period (gap 4 um, fingers 2 um, film 0.4 um), intrinsic
  // film, selective contacts; uniform generation plus an optional Gaussian
  // spot of amplitude a at (x, y) with width 0.15 um.
  struct PeriodCase
  {
    dealii::Triangulation<2> tria;
    Material                 m;
    ContactParameters        e, h;
    PeriodCase()
    {
      test_support::make_small_period(tria, 0.25);
      m.tau_n = m.tau_p = 2e-8;
      e.work_function = 4.0, e.S_n = 1e7, e.S_p = 10;
      h.work_function = 5.4, h.S_n = 10, h.S_p = 1e7;
    }
    double
    current(const Spot *s, double a, double bias)
    {
      const double G0 = 1e21;
      DeviceModel dev(300, {{ids::absorber, m}}, {ids::absorber}, e, h, SurfaceParameters(),
                      SurfaceParameters(), [=](double x, double y) {
                        double G = G0;
                        if (s)
                          G += a * std::exp(-((x - s->x) * (x - s->x) + (y - s->y) * (y - s->y)) / (0.15 * 0.15));
                        return G;
                      });
      DriftDiffusionSolver solver(tria, dev, tight());
      EXPECT_TRUE(illuminate(solver, 1.0, 8).converged);
      EXPECT_TRUE(move_to(solver, bias, 1.0, 8).converged);
      if (s == nullptr && a == 0)
        {
          fc    = solver.collection_probability();
          state = solver.state();
        }
      return solver.terminal_current().total();
    }
    dealii::Vector<double> fc, state;
  };
} // namespace

// Adjoint map against central finite differences of the terminal current
// for localised generation spots (analytic: dI = int f_c dG to first order).
TEST(CollectionProbability, AdjointMatchesFiniteDifferences)
{
  PeriodCase pc;
  const double bias = 0.3;
  pc.current(nullptr, 0.0, bias);
  const Spot spots[] = {{1.0 + 2.0, 0.2},  // gap centre
                        {1.05, 0.05},      // near the electron finger edge
                        {4.95, 0.05},      // near the hole finger edge
                        {0.5, 0.2},        // above the electron finger
                        {3.0, 0.38}};      // near the top surface
  for (const Spot &s : spots)
    {
      const double a  = 1e21;
      const double Ip = pc.current(&s, a, bias), Im = pc.current(&s, -a, bias);
      // int f_c dG dA by the solver's own quadrature: a solver whose
      // generation is the spot alone, set to the unperturbed state.
      DeviceModel spot_only(300, {{ids::absorber, pc.m}}, {ids::absorber}, pc.e, pc.h,
                            SurfaceParameters(), SurfaceParameters(), [&](double x, double y) {
                              return a * std::exp(-((x - s.x) * (x - s.x) + (y - s.y) * (y - s.y)) / (0.15 * 0.15));
                            });
      DriftDiffusionSolver probe(pc.tria, spot_only, tight());
      probe.set_state(pc.state, bias, 1.0);
      const double adjoint = probe.collected_current(pc.fc);
      const double fd      = 0.5 * (Ip - Im);
      std::printf("spot (%.2f, %.2f) um: dI adjoint %.6e, finite differences %.6e mA/cm2, ratio %.5f\n",
                  s.x, s.y, adjoint, fd, adjoint / fd);
      EXPECT_NEAR(adjoint / fd, 1.0, 0.01);
    }
}
