// Mobile ions (fem/mobile_ions.cc, fem/ion_scan.cc): the steady state
// against the Debye-Hueckel and the exact one-species Poisson-Boltzmann
// (Gouy-Chapman type) solutions, the ion-free solver recovered at a
// vanishing ion density, ion conservation through a transient, and the
// scan-rate limits of hysteresis.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/ion_scan.h"
#include "fem/operating_points.h"
#include "tests/strip_mesh.h"

#include <deal.II/base/quadrature_lib.h>
#include <deal.II/fe/fe_values.h>

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <map>

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

  // Debye length sqrt(eps kT / (q^2 z^2 N)) in um (SI inside).
  double
  debye_length_um(const double eps_r, const double N_cm3, const double z = 1)
  {
    return 1e6 * std::sqrt(eps_r * constants::eps0 * Vt / (constants::q * z * z * N_cm3 * 1e6));
  }

  // An ion conductor without electrons or holes: a 5 eV gap (n_i ~ 1e-30
  // cm^-3) between contacts at midgap, positive ions of density N with
  // diffusion coefficient D (cm^2/s; 0: the material's default).
  DeviceModel
  ion_conductor(const double N, const double D = 0)
  {
    Material m;
    m.band_gap    = 5.0;
    m.ion_density = N;
    m.ion_charge  = 1;
    if (D > 0)
      m.ion_diffusion = D;
    ContactParameters c;
    c.model         = "ohmic";
    c.work_function = m.electron_affinity + 0.5 * m.band_gap;
    return DeviceModel(300, {{ids::absorber, m}}, {ids::absorber}, c, c, SurfaceParameters(), SurfaceParameters(),
                       [](double, double) { return 0.0; });
  }

  // psi (kT/q) at the nodes of the strip's bottom edge, by x.
  std::map<double, double>
  potential_along(const DriftDiffusionSolver &s)
  {
    std::map<double, double>                     out;
    const auto                                  &dofs = s.dof_handler();
    std::vector<dealii::types::global_dof_index> idx(dofs.get_fe().n_dofs_per_cell());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        cell->get_dof_indices(idx);
        for (unsigned v = 0; v < 4; ++v)
          if (std::abs(cell->vertex(v)[1]) < 1e-12)
            out[cell->vertex(v)[0]] = s.state()[idx[dofs.get_fe().component_to_system_index(0, v)]];
      }
    return out;
  }

  // Net ionic charge z (c - N) integrated over x < x_max, per unit of strip
  // thickness (cm^-2), with the solver's own quadrature.
  double
  ionic_charge_left_of(const DriftDiffusionSolver &s, const double x_max, const double thickness_um)
  {
    const auto          &dofs = s.dof_handler();
    const dealii::QGauss<2> quad(4);
    dealii::FEValues<2>  fv(dofs.get_fe(), quad, dealii::update_values | dealii::update_JxW_values);
    std::vector<dealii::Vector<double>> u(quad.size(), dealii::Vector<double>(4));
    double               total = 0;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (cell->center()[0] > x_max)
          continue;
        const ScaledRegion &r = s.device_model().region(cell->material_id());
        fv.reinit(cell);
        fv.get_function_values(s.state(), u);
        for (unsigned q = 0; q < quad.size(); ++q)
          {
            const double c = r.ion_density * std::exp(r.ion_z * (u[q][3] - u[q][0]));
            total += r.ion_z * (c - r.ion_density) * fv.JxW(q);
          }
      }
    // um^2 * N0 cm^-3 / thickness -> cm^-2
    return total * s.device_model().scaling.N0 / thickness_um * 1e-4;
  }

  // A lateral cell: an intrinsic film between an electron contact (left,
  // work function near the conduction band) and a hole contact (right, near
  // the valence band), uniform generation; positive mobile ions of density
  // N with diffusion coefficient D (round numbers, not a material).
  DeviceModel
  lateral_cell(const double N, const double D)
  {
    Material m;
    m.band_gap      = 1.6;
    m.mu_n = m.mu_p = 2.0;
    m.tau_n = m.tau_p = 1e-7;
    m.ion_density   = N;
    m.ion_diffusion = D;
    ContactParameters e, h;
    e.model         = "ohmic";
    h.model         = "ohmic";
    e.work_function = m.electron_affinity + 0.2;
    h.work_function = m.electron_affinity + m.band_gap - 0.2;
    return DeviceModel(300, {{ids::absorber, m}}, {ids::absorber}, e, h, SurfaceParameters(), SurfaceParameters(),
                       [](double, double) { return 1e21; });
  }
} // namespace

// Steady state, small potential: one mobile species over a fixed
// background between blocking electrodes follows the linearised
// Poisson-Boltzmann (Debye-Hueckel) equation psi'' = psi / L_D^2, so with
// psi = +-V/2 at the ends of [0, L]
//   psi(x) - psi_mid = (V/2) sinh((x - L/2)/L_D) / sinh(L/(2 L_D))
// (P. Debye, E. Hueckel, Phys. Z. 24 (1923) 185; e.g. A. J. Bard,
// L. R. Faulkner, Electrochemical Methods, 2nd ed. 2001, Sec. 13.3). The
// ion number stays fixed, so by symmetry phi_c sits at psi_mid. V = 0.01
// kT/q keeps the non-linear correction (order V/2 relative) below 1 %.
TEST(MobileIons, SmallPotentialFollowsDebyeHueckel)
{
  const double      N = 1e17, L = 1.0, t = 0.1, LD = debye_length_um(25.0, N);
  const DeviceModel d = ion_conductor(N);
  ASSERT_TRUE(d.has_ions());
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, L, t, 0.0, 0.0005, 1.1, 0.02);
  DriftDiffusionSolver s(tria, d, tight());
  ASSERT_TRUE(s.has_ions());
  ASSERT_TRUE(s.solve_equilibrium().converged);
  const double V = 0.01; // kT/q
  ASSERT_TRUE(s.solve(V * Vt, 0.0).converged);
  const auto   psi = potential_along(s);
  const double mid = 0.5 * (psi.begin()->second + psi.rbegin()->second);
  double       worst = 0;
  for (const auto &[x, value] : psi)
    {
      const double dh = 0.5 * V * std::sinh((x - 0.5 * L) / LD) / std::sinh(0.5 * L / LD);
      worst           = std::max(worst, std::abs(value - mid - dh));
    }
  std::printf("L_D = %.4f nm; largest |psi - Debye-Hueckel| = %.3e of V/2\n", 1e3 * LD, worst / (0.5 * V));
  EXPECT_LT(worst / (0.5 * V), 1e-2);
  // The ions' number is kept: their mean density is N.
  EXPECT_NEAR(s.mean_ion_density() / N, 1.0, 1e-9);
}

// Steady state, large potential (20 kT/q): the exact first integral of the
// one-species Poisson-Boltzmann equation with a fixed background,
//   (d psi/dx)^2 = (2 / L_D^2) F(s),  F(s) = exp(-s) + s - 1
// (s = psi - psi_bulk in kT/q for positive ions; the surface space-charge
// function of a semiconductor with one mobile carrier over its ionised
// dopants: S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed.
// 2007, Sec. 4.2.2, from memory; accumulation on one side, Mott-Schottky
// depletion, F ~ s - 1, on the other), gives the charge of each layer by
// Gauss's law, |Q|/q = sqrt(2) N L_D sqrt(F(s_surface)). The two layers
// hold opposite charges and their surface potentials differ by V, which
// fixes s at both ends.
TEST(MobileIons, LargePotentialMatchesPoissonBoltzmannLayers)
{
  const double      N = 1e17, L = 2.0, t = 0.1, LD = debye_length_um(25.0, N);
  const DeviceModel d = ion_conductor(N);
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, L, t, 0.0, 0.0005, 1.1, 0.02);
  DriftDiffusionSolver s(tria, d, tight());
  ASSERT_TRUE(s.solve_equilibrium().converged);
  const double V = 20; // kT/q
  ASSERT_TRUE(move_to(s, V * Vt, 0.0, 10).converged);

  auto F = [](const double x) { return std::exp(-x) + x - 1; };
  // s_L in (-V, 0) with F(s_L) = F(s_L + V), by bisection.
  double lo = -V, hi = 0;
  for (int i = 0; i < 200; ++i)
    {
      const double m = 0.5 * (lo + hi);
      (F(m) > F(m + V) ? lo : hi) = m;
    }
  const double s_left   = 0.5 * (lo + hi);
  const double expected = std::sqrt(2.0) * N * LD * 1e-4 * std::sqrt(F(s_left)); // cm^-2
  const double computed = ionic_charge_left_of(s, 0.5 * L, t);
  std::printf("s_left = %.6f kT/q, s_right = %.6f kT/q; layer charge %.6e cm^-2 (Poisson-Boltzmann %.6e), "
              "relative difference %.2e\n",
              s_left, s_left + V, computed, expected, computed / expected - 1);
  EXPECT_NEAR(computed / expected, 1.0, 5e-3);
  // The bulk between the layers is neutral: phi_c there equals psi.
  EXPECT_NEAR(s.mean_ion_density() / N, 1.0, 1e-9);
}

// A vanishing ion density (1e-3 cm^-3 against 1e16 cm^-3 of carriers)
// leaves the solution of the ion-free solver unchanged: the same terminal
// current at three biases to 1e-9 relative, the difference expected from
// the ions' charge being ~1e-19 (an identity of the two models).
TEST(MobileIons, VanishingDensityIsTheIonFreeSolver)
{
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 2.0, 0.4, 0.0, 0.002, 1.2, 0.1);
  const DeviceModel    without = lateral_cell(0.0, 1e-12), with = lateral_cell(1e-3, 1e-12);
  DriftDiffusionSolver a(tria, without, tight()), b(tria, with, tight());
  ASSERT_FALSE(a.has_ions());
  ASSERT_TRUE(b.has_ions());
  ASSERT_TRUE(illuminate(a, 1.0, 8).converged);
  ASSERT_TRUE(illuminate(b, 1.0, 8).converged);
  for (const double V : {0.0, 0.5, 0.9})
    {
      ASSERT_TRUE(move_to(a, V, 1.0, 8).converged);
      ASSERT_TRUE(move_to(b, V, 1.0, 8).converged);
      const double ja = a.terminal_current().total(), jb = b.terminal_current().total();
      std::printf("V = %.2f V: J = %.12f (no ions) %.12f (1e-3 cm^-3) mA/cm2\n", V, ja, jb);
      EXPECT_NEAR(jb / ja, 1.0, 1e-9);
    }
}

// Ion number through a transient: twenty BDF2 steps of varying length
// while the bias rises by 0.8 V, the ions moving by a large fraction of
// their relaxation. The discrete equations conserve the number exactly
// (the sum of the ion rows is d/dt of the number, fem/mobile_ions.cc),
// so it may drift by the Newton tolerance only: 1e-10 relative.
TEST(MobileIons, TransientConservesTheIonNumber)
{
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 2.0, 0.4, 0.0, 0.001, 1.2, 0.1);
  const DeviceModel    d = lateral_cell(1e17, 1e-10);
  DriftDiffusionSolver s(tria, d, tight());
  ASSERT_TRUE(illuminate(s, 1.0, 8).converged);
  const double before = s.ion_number(s.state());
  s.begin_transient();
  double dt = 1e-3, largest_change = 0;
  for (unsigned k = 1; k <= 20; ++k)
    {
      const dealii::Vector<double> old = s.state();
      ASSERT_TRUE(s.solve_time_step(0.04 * k, 1.0, dt).converged) << "step " << k;
      for (std::size_t i = 0; i < old.size(); ++i)
        largest_change = std::max(largest_change, std::abs(s.state()[i] - old[i]));
      dt *= 1.5;
    }
  const double drift = std::abs(s.ion_number(s.state()) / before - 1);
  std::printf("ion number drift after 20 steps: %.2e (largest change of a potential in one step %.2f kT/q)\n",
              drift, largest_change);
  EXPECT_LT(drift, 1e-10);
  EXPECT_GT(largest_change, 0.1); // the ions did move
}

// Scan-rate limits (a property of the model, as in every account of
// ionic hysteresis, e.g. Habisreutinger, Noel, Snaith, ACS Energy Lett. 3
// (2018) 2472, from memory): a scan much slower than the ions' slowest
// time scale gives the steady-state J-V, one much faster than their
// fastest gives the J-V with the ions frozen where preconditioning left
// them, each within 0.5 % at every bias (of |J| there, or of Jsc where
// |J| is smaller); the hysteresis index
// vanishes at both ends and peaks between them. "Much faster than the
// ions" stays much slower than the carriers: their storage changes the
// current by about tau_carrier r / (2 kT/q), 2e-4 at the fastest rate.
// At every recorded point of every scan the total current (conduction
// plus displacement) is the same at both contacts (Maxwell-Ampere, as in
// the capacitance test below): a check that fails if the storage of
// electrons and holes or the displacement current were left out.

TEST(MobileIons, ScanRateLimitsAndHysteresisPeak)
{
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 2.0, 0.4, 0.0, 0.002, 1.25, 0.1);
  // L_D = 19 nm: ion relaxation L_D^2/D = 0.36 s, redistribution over
  // the strip about L L_D / D = 40 s.
  const DeviceModel d = lateral_cell(1e17, 1e-11);
  HysteresisSettings      set;
  set.low               = 0.0;
  set.high              = 1.3;
  set.step              = 0.05;
  set.precondition_bias = 1.3;
  set.precondition_time = 1000;

  // Steady-state J-V.
  std::map<double, double> steady;
  {
    DriftDiffusionSolver s(tria, d, tight());
    ASSERT_TRUE(illuminate(s, 1.0, 8).converged);
    for (double V = 0; V <= set.high + 1e-9; V += set.step)
      {
        ASSERT_TRUE(move_to(s, V, 1.0, 8).converged);
        steady[std::round(V / set.step)] = s.terminal_current().total();
      }
  }
  const double jsc = steady[0];
  // Frozen: preconditioned, then instantaneous changes of bias.
  std::map<double, double> frozen;
  {
    DriftDiffusionSolver s(tria, d, tight());
    ASSERT_TRUE(s.solve_equilibrium().converged);
    HysteresisSettings only = set;
    only.directions.clear();
    ASSERT_TRUE(scan_with_ions(s, only).converged);
    for (double V = set.high; V >= -1e-9; V -= set.step)
      {
        ASSERT_TRUE(move_to(s, V, 1.0, 8).converged);
        frozen[std::round(V / set.step)] = s.terminal_current().total();
      }
  }
  std::vector<double> rates = {1e-6, 1e-4, 1e-2, 1, 1e2}, index;
  for (const double rate : rates)
    {
      DriftDiffusionSolver s(tria, d, tight());
      ASSERT_TRUE(s.solve_equilibrium().converged);
      set.rate = rate;
      double kirchhoff = 0, displacement = 0;
      const HysteresisScan r = scan_with_ions(s, set, [&](const std::string &, const HysteresisPoint &) {
        const TerminalCurrent j = s.terminal_current();
        kirchhoff = std::max(kirchhoff, std::abs(j.electron_contact_electron + j.electron_contact_hole +
                                                 j.electron_contact_displacement - j.total()) / jsc);
        displacement = std::max(displacement, std::abs(j.displacement) / jsc);
      });
      ASSERT_TRUE(r.converged) << r.diagnostic;
      index.push_back(r.hysteresis_index);
      double off_steady = 0, off_frozen = 0;
      for (const HysteresisCurve &c : r.curves)
        for (const HysteresisPoint &p : c.points)
          {
            // Relative to the larger of |J| and Jsc.
            const double js = steady[std::round(p.voltage / set.step)];
            off_steady      = std::max(off_steady, std::abs(p.current - js) / std::max(std::abs(js), jsc));
            if (c.direction == "reverse")
              {
                const double jf = frozen[std::round(p.voltage / set.step)];
                off_frozen      = std::max(off_frozen, std::abs(p.current - jf) / std::max(std::abs(jf), jsc));
              }
          }
      std::printf("rate %8.0e V/s: Pmax reverse %.4f forward %.4f mW/cm2, hysteresis index %+.4f; "
                  "%u steps (%u rejected), dt %.2e..%.2e s; largest |J - J_steady| %.2e, reverse |J - J_frozen| "
                  "%.2e (of max(|J|, Jsc)); ion number drift %.1e; largest displacement current %.1e of Jsc, "
                  "largest difference of the total current at the two contacts %.1e of Jsc\n",
                  rate, r.curves[0].metrics.Pmax, r.curves[1].metrics.Pmax, r.hysteresis_index, r.time_steps,
                  r.rejected, r.smallest_dt, r.largest_dt, off_steady, off_frozen, r.ion_number_drift, displacement,
                  kirchhoff);
      EXPECT_LT(kirchhoff, 1e-7);
      if (rate == rates.front())
        EXPECT_LT(off_steady, 5e-3);
      if (rate == rates.back())
        EXPECT_LT(off_frozen, 5e-3);
      EXPECT_LT(r.ion_number_drift, 1e-10);
    }
  const double peak = *std::max_element(index.begin(), index.end(),
                                        [](double a, double b) { return std::abs(a) < std::abs(b); });
  EXPECT_LT(std::abs(index.front()), 0.1 * std::abs(peak));
  EXPECT_LT(std::abs(index.back()), 0.1 * std::abs(peak));
  EXPECT_GT(std::abs(peak), 0.01);
}

// Displacement current, and the three species' storage in a time step: a
// blocking cell of mobile ions (no electrons or holes) under a slow bias
// ramp V = r t draws the current C r of its capacitance. Before the ions
// move (t much shorter than their relaxation L_D^2/D) that is the
// geometric capacitance eps/L; long after the cell's charging time
// (about L L_D / (2 D)) it is the static capacitance of the two diffuse
// layers in series, from the Debye-Hueckel solution above:
//   C = eps coth(L / (2 L_D)) / (2 L_D)
// (dQ/dV of the surface field; Bard & Faulkner, Sec. 13.3, whose diffuse-
// layer capacitance eps/L_D per electrode in the linear limit this is for
// two electrodes; from memory). The total current -- conduction plus
// displacement -- is the same through both contacts at every step
// (Maxwell-Ampere: div (J + dD/dt) = 0), which the discrete equations keep
// up to the Newton tolerance.
TEST(MobileIons, DisplacementCurrentChargesTheIonicCapacitance)
{
  const double N = 1e17, L = 1.0, t = 0.1, D = 1e-10, LD = debye_length_um(25.0, N);
  const DeviceModel d = ion_conductor(N, D); // relative permittivity 25, the default
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, L, t, 0.0, 0.0005, 1.1, 0.02);
  const double eps         = 25.0 * constants::eps0 * 1e-2;       // F/cm
  const double tau_r       = std::pow(LD * 1e-4, 2) / D;          // s
  const double tau_cell    = 0.5 * L / LD * tau_r;                // s
  const double C_geometric = eps / (L * 1e-4);                    // F/cm^2
  const double C_static    = eps / (2 * LD * 1e-4) / std::tanh(0.5 * L / LD);

  // A ramp from equilibrium that reaches 1e-3 kT/q (linear response, and
  // potentials far above the Newton tolerance) at t_end, in steps from dt0
  // growing by 1.5 up to dt_max: the current at the end over C r, with C
  // the capacitance per area as mA/cm^2 of the strip's width (C t/L per
  // unit length over the width L), and the largest relative difference of
  // the total current at the two contacts over the last 90 % of the ramp.
  struct Ramp
  {
    double current_over_C_r, kirchhoff;
    unsigned steps;
  };
  auto ramp = [&](const double t_end, double dt, const double dt_max, const double C) {
    DriftDiffusionSolver s(tria, d, tight());
    EXPECT_TRUE(s.solve_equilibrium().converged);
    s.begin_transient();
    const double rate = 1e-3 * Vt / t_end;
    Ramp         out{0, 0, 0};
    double       time = 0;
    while (time < t_end * (1 - 1e-9))
      {
        dt = std::min(dt, t_end - time);
        EXPECT_TRUE(s.solve_time_step(rate * (time + dt), 0.0, dt).converged) << "t = " << time + dt;
        time += dt;
        ++out.steps;
        const TerminalCurrent j     = s.terminal_current();
        const double          je    = j.electron_contact_electron + j.electron_contact_hole + j.electron_contact_displacement;
        const double          scale = 1e3 * C * rate * t / L;
        if (time > 0.1 * t_end) // where the potentials are well above the Newton tolerance
          out.kirchhoff = std::max(out.kirchhoff, std::abs(je - j.total()) / scale);
        // Generator convention: charging draws current into the positive
        // (hole) contact.
        out.current_over_C_r = -j.total() / scale;
        dt                   = std::min(1.5 * dt, dt_max);
      }
    return out;
  };
  const Ramp early = ramp(5e-4 * tau_r, 1e-5 * tau_r, 1.0, C_geometric);
  const Ramp late  = ramp(20 * tau_cell, 1e-4 * tau_r, tau_cell / 20, C_static);
  std::printf("L_D %.3f nm, tau_r = L_D^2/D %.3e s, charging time L L_D/(2D) %.3e s, C_static/C_geometric %.2f\n"
              "at t = 5e-4 tau_r (%u steps): current / (C_geometric r) = %.7f (first order 1.0005000); largest relative difference of the "
              "total current at the two contacts %.1e\n"
              "at t = 20 charging times (%u steps): current / (C_static r) = %.6f; largest difference %.1e\n",
              1e3 * LD, tau_r, tau_cell, C_static / C_geometric, early.steps, early.current_over_C_r, early.kirchhoff,
              late.steps, late.current_over_C_r, late.kirchhoff);
  // Early, the ions' ohmic current sigma V/L (sigma = eps/tau_r) piles
  // charge at the electrodes as well: C_geometric r (1 + t/tau_r) to
  // first order in t/tau_r.
  EXPECT_NEAR(early.current_over_C_r, 1.0 + 5e-4, 5e-5);
  EXPECT_NEAR(late.current_over_C_r, 1.0, 1e-2);
  EXPECT_LT(early.kirchhoff, 1e-5);
  EXPECT_LT(late.kirchhoff, 1e-5);
}
