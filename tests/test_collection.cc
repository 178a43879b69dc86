// Local collection probability from the adjoint (transposed-Jacobian)
// solve, checked against the diffusion solution on a strip and against
// finite differences of the terminal current on a comb period.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "fem/optics.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <utility>
#include <vector>

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
  // The diffusion-limited strip: p-type film (1e16 cm^-3) with an electron
  // diffusion length of 1 um, ohmic contacts at both ends.
  std::pair<Material, ContactParameters>
  diffusion_strip()
  {
    Material m;
    m.acceptors = 1e16;
    m.mu_n = m.mu_p = 10.0;
    const double D = m.mu_n * Vt;
    m.tau_n = m.tau_p = 1e-8 / D; // L = 1 um
    ContactParameters c;
    c.model         = "ohmic";
    c.work_function = m.electron_affinity + m.band_gap - Vt * std::log(m.Nv / m.acceptors);
    return {m, c};
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
  const auto [m, c] = diffusion_strip();
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

// ------------------------------------------------------ spectral response

namespace
{
  // EQE per wavelength of `gen` from a collection map, per photon incident
  // on the footprint (the computation of simulator/case_run.cc).
  std::vector<double>
  eqe_from_map(const DriftDiffusionSolver &solver, const Generation &gen, const dealii::Vector<double> &fc)
  {
    std::vector<double> acc(gen.wavelengths_nm().size(), 0.0);
    for (const auto &p : solver.collection_points(fc))
      gen.add_pair_densities(p.x_um, p.y_um, p.weight, acc);
    for (double &a : acc)
      a /= solver.width_um();
    return acc;
  }

  // The pairs per unit volume of wavelength i at (x, y) per photon, um^-1.
  double
  pair_density(const Generation &gen, std::size_t i, double x, double y)
  {
    std::vector<double> a(gen.wavelengths_nm().size(), 0.0);
    gen.add_pair_densities(x, y, 1.0, a);
    return a[i];
  }

  const std::filesystem::path am15g_file   = std::filesystem::path(BACKCOMB_DATA_DIR) / "astm-g173-03.csv";
  const std::filesystem::path mapi_nk_file = std::filesystem::path(BACKCOMB_DATA_DIR) / "absorber-nk-mapi.yml";
} // namespace

// EQE from the collection map on the small comb period under AM1.5G light
// (film side): (1) q int EQE Phi dl equals q int G f_c dA (the spectral
// decomposition of the same integral, to the 1e-4 of the interpolated
// depth profile); (2) at three wavelengths it equals the response of the
// terminal current to a small added monochromatic light, by central
// finite differences (analytic: dI = q int f_c dG to first order), within
// 1 %.
TEST(QuantumEfficiency, MapMatchesMonochromaticPerturbation)
{
  PeriodCase          pc;
  IlluminationParameters p;
  p.spectrum_file          = am15g_file;
  p.optical_constants_file = mapi_nk_file;
  p.front_reflectance      = 0.05;
  const Generation gen(p, 1.6, 0.4, FingerLayout{1, 4, 1, true});
  const auto       solve_with = [&](const std::size_t i, const double dphi, dealii::Vector<double> *fc) {
    DeviceModel dev(300, {{ids::absorber, pc.m}}, {ids::absorber}, pc.e, pc.h, SurfaceParameters(),
                    SurfaceParameters(), [&](double x, double y) {
                      // photons cm^-2 s^-1 times um^-1: 1e4 for cm^-3 s^-1.
                      return gen.rate(x, y) + (dphi != 0 ? 1e4 * dphi * pair_density(gen, i, x, y) : 0.0);
                    });
    DriftDiffusionSolver solver(pc.tria, dev, tight());
    EXPECT_TRUE(illuminate(solver, 1.0, 8).converged);
    EXPECT_TRUE(move_to(solver, 0.0, 1.0, 8).converged);
    if (fc)
      {
        *fc = solver.collection_probability();
        const std::vector<double> eqe = eqe_from_map(solver, gen, *fc);
        const auto               &w   = gen.wavelengths_nm();
        std::vector<double>       y(w.size());
        const auto                flux = gen.incident_photon_flux();
        for (std::size_t k = 0; k < w.size(); ++k)
          y[k] = eqe[k] * flux[k];
        const double integral = 1e3 * constants::q * integrate_trapezoid(w, y);
        const double direct   = solver.collected_current(*fc);
        std::printf("q int EQE Phi = %.6f mA/cm2, q int G f_c = %.6f mA/cm2, terminal %.6f mA/cm2\n", integral,
                    direct, solver.terminal_current().total());
        EXPECT_NEAR(integral / direct, 1.0, 2e-4);
        // Against Jsc: within the non-linearity measure (the difference of
        // q int G f_c from the terminal current) and the 2e-4 above.
        const double jsc = solver.terminal_current().total();
        EXPECT_LE(std::abs(integral - jsc), std::abs(direct - jsc) + 2e-4 * jsc);
      }
    return solver.terminal_current().total();
  };
  dealii::Vector<double> fc;
  solve_with(0, 0.0, &fc);
  // The map once more, for the EQE of every wavelength.
  DeviceModel base(300, {{ids::absorber, pc.m}}, {ids::absorber}, pc.e, pc.h, SurfaceParameters(),
                   SurfaceParameters(), [&](double x, double y) { return gen.rate(x, y); });
  DriftDiffusionSolver solver(pc.tria, base, tight());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  ASSERT_TRUE(move_to(solver, 0.0, 1.0, 8).converged);
  const std::vector<double> eqe = eqe_from_map(solver, gen, solver.collection_probability());
  const auto               &w   = gen.wavelengths_nm();
  for (const double target : {400.0, 550.0, 700.0})
    {
      const std::size_t i =
        std::lower_bound(w.begin(), w.end(), target) - w.begin();
      // 1e14 photons cm^-2 s^-1: about 1e-3 of the sun's photon flux.
      const double dphi = 1e14;
      const double Ip = solve_with(i, dphi, nullptr), Im = solve_with(i, -dphi, nullptr);
      const double fd = 0.5 * (Ip - Im) / (1e3 * constants::q * dphi);
      std::printf("%.1f nm: EQE from the map %.6f, from the perturbation %.6f\n", w[i], eqe[i], fd);
      EXPECT_NEAR(eqe[i] / fd, 1.0, 0.01);
    }
}

// The diffusion-limited strip (as DopedStripMatchesDiffusionSolution): f_c
// depends on x alone, so the internal QE (EQE over the absorber's
// absorptance) of every wavelength is the mean of f_c, the analytic
// collected fraction (2L/g) tanh(g/(2L)) (Donolato 1985, as above).
TEST(QuantumEfficiency, StripInternalQEIsDiffusionLimit)
{
  const auto [m, c] = diffusion_strip();
  const double g  = 5.0;
  // The strip of DopedStripMatchesDiffusionSolution with 40 layers of 25 nm
  // in depth, so that the quadrature resolves light absorbed within 50 nm.
  dealii::Triangulation<2> tria;
  dealii::GridGenerator::subdivided_hyper_rectangle(
    tria, {test_support::graded_segment(g, 0.002, 1.1, 0.05, true, true), std::vector<double>(40, 0.025)},
    dealii::Point<2>(0, 0), dealii::Point<2>(g, 1.0));
  test_support::set_strip_ids(tria, g, 1.0, 0.0);
  IlluminationParameters p;
  p.spectrum_file          = am15g_file;
  p.optical_constants_file = mapi_nk_file;
  p.intensity_suns         = 1e-5; // low injection: 1e16 acceptors
  const Generation gen(p, 1.6, 1.0, FingerLayout{0, 0, 0, false});
  DeviceModel dev(300, {{ids::absorber, m}}, {ids::absorber}, c, c, SurfaceParameters(), SurfaceParameters(),
                  [&](double x, double y) { return gen.rate(x, y); });
  DriftDiffusionSolver solver(tria, dev, tight());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const std::vector<double> w   = solver.electron_collection_weights();
  const std::vector<double> eqe = eqe_from_map(solver, gen, solver.collection_probability(&w));
  const auto                f   = gen.spectral_fractions();
  const double              exact = 2 / g * std::tanh(0.5 * g);
  const auto               &wl    = gen.wavelengths_nm();
  for (const double target : {350.0, 500.0, 650.0})
    {
      const std::size_t i = std::lower_bound(wl.begin(), wl.end(), target) - wl.begin();
      std::printf("%.1f nm: absorptance %.5f, EQE %.5f, IQE %.5f, analytic %.5f\n", wl[i], f.absorbed[i], eqe[i],
                  eqe[i] / f.absorbed[i], exact);
      EXPECT_NEAR(eqe[i] / f.absorbed[i] / exact, 1.0, 0.01);
    }
}
