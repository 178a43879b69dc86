// Verification of the drift-diffusion solver against textbook device
// physics on test strips. Each check names its source.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "tests/junction.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;
using test_support::Junction;
using test_support::light_jv;
using test_support::ohmic_contact;
using test_support::textbook_material;

namespace
{
  constexpr double T  = 300.0;
  const double     Vt = constants::k_B * T / constants::q;

  // Strip device; generation uniform `G` (cm^-3 s^-1) in both regions.
  DeviceModel
  strip_device(const Material &left, const Material &right, const double G,
               const ContactParameters &ec, const ContactParameters &hc)
  {
    return DeviceModel(T, {{ids::absorber, left}, {ids::absorber_right, right}},
                       {ids::absorber, ids::absorber_right}, ec, hc, SurfaceParameters(),
                       SurfaceParameters(), [G](double, double) { return G; });
  }

  NumericsParameters
  tight_numerics()
  {
    NumericsParameters n;
    n.tolerance      = 1e-10;
    n.max_iterations = 200;
    return n;
  }
} // namespace

// Equilibrium densities in a neutral n-type region: n = N_D and
// p = n_i^2 / N_D with n_i = sqrt(Nc Nv) exp(-Eg/2kT) (Sze & Ng, Physics of
// Semiconductor Devices, 3rd ed., 2007, eqs. 1.22 and 1.29-1.30; Boltzmann
// statistics, complete ionisation).
TEST(Equilibrium, IntrinsicDensityAndNeutralRegion)
{
  Material m = textbook_material();
  m.donors   = 1e16;
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 10.0, 1.0, 0.0, 0.01);
  ContactParameters c;
  c.model = "ohmic";
  // Work functions of an ideal ohmic contact to this n-type material.
  const double ni      = std::sqrt(m.Nc * m.Nv) * std::exp(-m.band_gap / (2 * Vt));
  c.work_function      = m.electron_affinity + Vt * std::log(m.Nc / 1e16);
  const DeviceModel dev = strip_device(m, m, 0.0, c, c);
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(solver.solve_equilibrium().converged);
  // Sample the centre node.
  const auto &u = solver.state();
  const auto &r = dev.region(ids::absorber);
  double best = 1e9, n = 0, p = 0;
  std::vector<dealii::types::global_dof_index> idx(12);
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    for (unsigned v = 0; v < 4; ++v)
      if (std::abs(cell->vertex(v)[0] - 5.0) < best)
        {
          best = std::abs(cell->vertex(v)[0] - 5.0);
          cell->get_dof_indices(idx);
          const double psi = u[idx[3 * v]], phin = u[idx[3 * v + 1]], phip = u[idx[3 * v + 2]];
          n = std::exp(psi - phin + r.a_n) * dev.scaling.N0;
          p = std::exp(phip - psi + r.a_p) * dev.scaling.N0;
        }
  EXPECT_NEAR(n / 1e16, 1.0, 1e-6);
  EXPECT_NEAR(p / (ni * ni / 1e16), 1.0, 1e-6);
  EXPECT_NEAR(m.intrinsic_density(T) / ni, 1.0, 1e-12);
}


// Built-in potential V_bi = (kT/q) ln(N_A N_D / n_i^2) and depletion width
// W = sqrt(2 eps (V_bi - 2kT/q)/q (1/N_A + 1/N_D)), the depletion
// approximation with the majority-carrier tail correction (Sze & Ng, 3rd
// ed., 2007, eqs. 2.9 and 2.11 with sec. 2.2.2). W is measured as the
// space charge on the n side within 5 um of the junction divided by q N_D,
// times two.
//
// The contacts are deliberately not at the bulk Fermi levels: the p-side
// metal's work function lies 0.15 eV below the valence-band-side Fermi level
// of the p region's, the n-side metal's 0.10 eV above the n region's (both
// accumulating, so the contacts stay ohmic). V_bi must then be read between
// the two neutral regions, where charge neutrality alone fixes the
// potential, and each contact must carry a thin accumulation layer whose
// potential step equals the difference of the work functions of metal and
// semiconductor (Sze & Ng, 3rd ed., 2007, sec. 3.2, eq. 3.1-3.3 for the
// ideal metal-semiconductor contact; Boltzmann statistics).
TEST(PnJunction, BuiltInPotentialWithUnpinnedContacts)
{
  const Junction j;
  dealii::Triangulation<2> tria;
  j.mesh(tria);
  const Material mp = j.p_side(), mn = j.n_side();
  const double   ni = std::sqrt(mp.Nc * mp.Nv) * std::exp(-mp.band_gap / (2 * Vt));
  const double   offset_p = 0.15, offset_n = 0.10; // eV
  ContactParameters left = j.p_contact(), right = j.n_contact();
  left.work_function += offset_p;  // further from the vacuum level than E_F of the p side
  right.work_function -= offset_n; // closer to the vacuum level than E_F of the n side
  DeviceModel dev(T, {{ids::absorber, mp}, {ids::absorber_right, mn}}, {}, left, right,
                  SurfaceParameters(), SurfaceParameters(), nullptr);
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(solver.solve_equilibrium().converged);

  // psi at both contacts and in the middle of each neutral region, and the
  // space charge on the n side next to the junction.
  const auto &u = solver.state();
  double psi_left = 0, psi_right = 0, psi_p = 0, psi_n = 0, charge = 0;
  const double x_p = 0.5 * j.xj, x_n = 0.5 * (j.xj + j.L);
  double       d_p = 1e9, d_n = 1e9;
  std::vector<dealii::types::global_dof_index> idx(12);
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    {
      cell->get_dof_indices(idx);
      const auto &r = dev.region(cell->material_id());
      for (unsigned v = 0; v < 4; ++v)
        {
          const double x = cell->vertex(v)[0];
          if (std::abs(x) < 1e-9)
            psi_left = u[idx[3 * v]];
          if (std::abs(x - j.L) < 1e-9)
            psi_right = u[idx[3 * v]];
          if (std::abs(x - x_p) < d_p)
            d_p = std::abs(x - x_p), psi_p = u[idx[3 * v]];
          if (std::abs(x - x_n) < d_n)
            d_n = std::abs(x - x_n), psi_n = u[idx[3 * v]];
        }
      if (cell->material_id() == ids::absorber_right && cell->center()[0] < j.xj + 5.0)
        {
          // Cell-average space charge (trapezoid on the two x-nodes).
          double rho = 0;
          for (unsigned v : {0u, 1u})
            {
              const double psi = u[idx[3 * v]];
              const double n   = std::exp(psi - u[idx[3 * v + 1]] + r.a_n);
              const double p   = std::exp(u[idx[3 * v + 2]] - psi + r.a_p);
              rho += 0.5 * (p - n + r.doping);
            }
          charge += rho * cell->extent_in_direction(0) * dev.scaling.N0;
        }
    }
  const double Vbi_textbook = Vt * std::log(j.N * j.N / (ni * ni));
  const double Vbi_solver   = (psi_n - psi_p) * Vt;
  EXPECT_NEAR(Vbi_solver / Vbi_textbook, 1.0, 1e-6);
  // The whole drop between the metals is the difference of their work
  // functions (equilibrium: one Fermi level), and the steps at the
  // contacts are the offsets from the semiconductor's Fermi level.
  EXPECT_NEAR((psi_right - psi_left) * Vt, left.work_function - right.work_function, 1e-9);
  EXPECT_NEAR((psi_p - psi_left) * Vt, offset_p, 1e-6);
  EXPECT_NEAR((psi_right - psi_n) * Vt, offset_n, 1e-6);

  const double eps     = mp.permittivity * constants::eps0 * 1e-2; // F/cm
  const double W_text  = std::sqrt(2 * eps * (Vbi_textbook - 2 * Vt) / constants::q * (2.0 / j.N)) * 1e4; // um
  const double W_model = 2 * charge / j.N;
  std::printf("V_bi %.6f V (textbook %.6f), contact steps %.6f / %.6f V (work-function offsets %.2f / %.2f), "
              "W %.5f um (depletion approx. %.5f um)\n",
              Vbi_solver, Vbi_textbook, (psi_p - psi_left) * Vt, (psi_right - psi_n) * Vt, offset_p, offset_n,
              W_model, W_text);
  EXPECT_NEAR(W_model / W_text, 1.0, 0.05);
}

// Equilibrium without mobile ions is solved with the psi block of the
// Jacobian alone (the quasi-Fermi levels stay at zero) and confirmed by one
// step of the full system. It must agree with Newton on the full system
// (PETSc's own LU takes that path) from the same start, and it must take
// the short path: one factorisation of the full Jacobian, not one per
// step. (Its V_bi against the textbook is checked above.)
TEST(PnJunction, EquilibriumFromThePotentialBlockAgreesWithFullNewton)
{
  const Junction           j;
  dealii::Triangulation<2> tria;
  j.mesh(tria);
  DeviceModel dev(T, {{ids::absorber, j.p_side()}, {ids::absorber_right, j.n_side()}}, {}, j.p_contact(),
                  j.n_contact(), SurfaceParameters(), SurfaceParameters(), nullptr);
  DriftDiffusionSolver block(tria, dev, tight_numerics());
  DriftDiffusionSolver full(tria, dev, tight_numerics(), MPI_COMM_NULL, "petsc");
  const NewtonReport   rb = block.solve_equilibrium(), rf = full.solve_equilibrium();
  ASSERT_TRUE(rb.converged);
  ASSERT_TRUE(rf.converged);
  dealii::Vector<double> d = block.state();
  d -= full.state();
  double phi = 0;
  std::vector<dealii::types::global_dof_index> idx(12);
  for (const auto &cell : block.dof_handler().active_cell_iterators())
    {
      cell->get_dof_indices(idx);
      for (unsigned v = 0; v < 4; ++v)
        phi = std::max({phi, std::abs(block.state()[idx[3 * v + 1]]), std::abs(block.state()[idx[3 * v + 2]])});
    }
  std::printf("largest difference %.3g kT/q, largest quasi-Fermi level %.3g kT/q; full Jacobians factorised: "
              "%u (psi block) against %u (full Newton, %u steps)\n",
              d.linfty_norm(), phi, block.factorisations(), full.factorisations(), rf.iterations);
  EXPECT_LT(d.linfty_norm(), 1e-8);
  EXPECT_LT(phi, 1e-12);
  EXPECT_EQ(block.factorisations(), 1u);
  EXPECT_GE(full.factorisations(), 5u);
}

// Dark J-V of a long-base symmetric p-n junction follows the ideal-diode
// law J = J0 (exp(V/Vt) - 1), J0 = q n_i^2 (D_n/(L_n N_A) + D_p/(L_p N_D))
// (Sze & Ng, 3rd ed., 2007, eq. 2.65 in sec. 2.4.2, "Shockley equation").
// Radiative recombination only, so the lifetime is tau = 1/(B N) and the
// space-charge recombination is a fraction ~W/(2L) of the diffusion current.
TEST(PnJunction, IdealDiodeLaw)
{
  const Junction j;
  dealii::Triangulation<2> tria;
  j.mesh(tria);
  const DeviceModel    dev = j.dark_diode();
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(solver.solve_equilibrium().converged);
  const double J0 = j.saturation_current(); // mA/cm^2
  for (double V = 0.05; V <= 0.5001; V += 0.05)
    {
      const StepReport s = move_to(solver, V, 0.0, 8);
      ASSERT_TRUE(s.converged) << s.diagnostic;
      if (V < 0.199)
        continue;
      // Generator convention: a forward-biased dark diode draws current.
      const double J_model = -solver.terminal_current().total() * j.L; // per unit strip cross-section
      const double J_ideal = J0 * (std::exp(V / Vt) - 1);
      std::printf("V = %.2f V: J = %.6e mA/cm^2, ideal diode %.6e, ratio %.4f\n", V, J_model,
                  J_ideal, J_model / J_ideal);
      EXPECT_NEAR(J_model / J_ideal, 1.0, 0.05);
    }
}

// Diffusion-limited collection: a p-type strip with uniform generation and
// ohmic (minority-absorbing) contacts at both ends, at short circuit and low
// injection. The minority-carrier diffusion equation D n'' - n/tau + G = 0
// with n(0) = n(g) = 0 gives the collected fraction (2L/g) tanh(g/(2L))
// (standard solution; e.g. Sze & Ng, 3rd ed., 2007, sec. 2.4.2 for the
// diffusion equation in a quasi-neutral region).
TEST(Collection, DiffusionLimitedStrip)
{
  Material m  = textbook_material();
  m.acceptors = 1e16;
  m.mu_n = m.mu_p = 10.0;
  // L = 1 um: tau = L^2 / D.
  const double D   = m.mu_n * Vt;
  m.tau_n = m.tau_p = 1e-8 / D;
  const double G   = 1e16; // cm^-3 s^-1: delta n ~ G tau << N_A
  ContactParameters c = ohmic_contact();
  c.work_function     = m.electron_affinity + m.band_gap - Vt * std::log(m.Nv / m.acceptors);
  for (const double ratio : {0.5, 1.0, 2.0, 5.0, 10.0, 20.0})
    {
      const double g = ratio * 1.0; // um
      dealii::Triangulation<2> tria;
      test_support::make_strip(tria, g, 1.0, 0.0, 0.002 * g, 1.1, 0.05);
      DeviceModel          dev(T, {{ids::absorber, m}}, {ids::absorber}, c, c, SurfaceParameters(),
                               SurfaceParameters(), [G](double, double) { return G; });
      DriftDiffusionSolver solver(tria, dev, tight_numerics());
      const StepReport     s = illuminate(solver, 1.0, 8);
      ASSERT_TRUE(s.converged) << s.diagnostic;
      const TerminalCurrent t = solver.terminal_current();
      // Electron current out of both ends, over the generated current.
      const double collected = t.electron_contact_electron - t.electron;
      const double generated = solver.generation_current();
      const double expected  = 2.0 / ratio * std::tanh(ratio / 2.0);
      std::printf("g/L = %5.1f: collected fraction %.5f, diffusion solution %.5f\n", ratio,
                  collected / generated, expected);
      EXPECT_NEAR(collected / generated / expected, 1.0, 0.02);
    }
}

namespace
{
  // Small-signal resistance (per unit depth, Ohm cm) of a uniformly lit
  // intrinsic strip of length L_um with ohmic end contacts.
  double
  photoconductor_resistance(const Material &m, const double G, const double L_um)
  {
    dealii::Triangulation<2> tria;
    test_support::make_strip(tria, L_um, 1.0, 0.0, 0.01, 1.15, 2.0);
    ContactParameters c = ohmic_contact();
    c.work_function     = m.electron_affinity + 0.5 * m.band_gap; // midgap, Nc = Nv
    DeviceModel dev(T, {{ids::absorber, m}}, {ids::absorber}, c, c, SurfaceParameters(),
                    SurfaceParameters(), [G](double, double) { return G; });
    DriftDiffusionSolver solver(tria, dev, tight_numerics());
    const StepReport     s = illuminate(solver, 1.0, 8);
    EXPECT_TRUE(s.converged) << s.diagnostic;
    const double dV = 0.1 * Vt;
    double       I[2];
    for (int k = 0; k < 2; ++k)
      {
        const StepReport r = move_to(solver, k == 0 ? -dV : dV, 1.0, 8);
        EXPECT_TRUE(r.converged) << r.diagnostic;
        // mA/cm^2 of width -> A per cm of depth: J * L.
        I[k] = -solver.terminal_current().total() * 1e-3 * (L_um * 1e-4);
      }
    return 2 * dV / (I[1] - I[0]);
  }
} // namespace

// Uniformly illuminated intrinsic photoconductor: the conductance per unit
// length is q (mu_n + mu_p) n t, with n = p = sqrt(G/B) for radiative
// recombination and n = G (tau_n + tau_p) for SRH through a mid-gap trap
// (n = p >> n1) (steady-state photoconductivity, e.g. Sze & Ng, 3rd ed.,
// 2007, ch. 13, photoconductor gain). The resistances of two strips of
// different length are subtracted so that the contact regions (a few
// ambipolar diffusion lengths, here ~2 um) cancel exactly.
TEST(Photoconductor, SmallSignalConductance)
{
  Material m          = textbook_material();
  m.band_gap          = 1.6;
  m.electron_affinity = 3.9;
  m.mu_n = m.mu_p = 1.0;
  const double G      = 1e21;
  const double t_cm   = 1e-4;
  const double dL_cm  = 200e-4;
  for (const bool radiative : {true, false})
    {
      Material mm = m;
      double   n  = 0;
      if (radiative)
        {
          mm.B_rad = 1e-10;
          mm.tau_n = mm.tau_p = 1.0;
          n = std::sqrt(G / mm.B_rad);
        }
      else
        {
          mm.tau_n = mm.tau_p = 1e-6;
          n = G * (mm.tau_n + mm.tau_p);
        }
      const double R1 = photoconductor_resistance(mm, G, 200.0);
      const double R2 = photoconductor_resistance(mm, G, 400.0);
      const double sigma_model = dL_cm / ((R2 - R1) * t_cm);
      const double sigma_text  = constants::q * (mm.mu_n + mm.mu_p) * n;
      std::printf("%s: sigma = %.6e S/cm, expected %.6e S/cm, ratio %.5f\n",
                  radiative ? "radiative" : "SRH", sigma_model, sigma_text, sigma_model / sigma_text);
      EXPECT_NEAR(sigma_model / sigma_text, 1.0, 0.02);
    }
}


// A long-base p-n junction under weak uniform light behaves as an ideal
// single-diode cell (superposition, low injection): its fill factor follows
// FF = (v_oc - ln(v_oc + 0.72)) / (v_oc + 1), v_oc = V_oc / V_t
// (M. A. Green, Solid-State Electronics 24 (1981) 788) within 0.01.
TEST(SolarCell, IdealDiodeFillFactorFollowsGreen)
{
  const Junction j;
  dealii::Triangulation<2> tria;
  j.mesh(tria);
  const Material mp = j.p_side(), mn = j.n_side();
  const ContactParameters left = j.p_contact(), right = j.n_contact();
  const double G = 1e20; // cm^-3 s^-1: V_oc ~ 0.4 V, low injection
  DeviceModel dev(T, {{ids::absorber, mn}, {ids::absorber_right, mp}}, {ids::absorber, ids::absorber_right},
                  right, left, SurfaceParameters(), SurfaceParameters(), [G](double, double) { return G; });
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const JVMetrics m = jv_metrics(light_jv(solver, 0.005));
  ASSERT_TRUE(m.valid);
  const double voc   = m.Voc / Vt;
  const double green = (voc - std::log(voc + 0.72)) / (voc + 1);
  std::printf("V_oc = %.4f V (v_oc = %.2f): FF = %.4f, Green %.4f\n", m.Voc, voc, m.FF, green);
  EXPECT_GT(voc, 10.0); // the expression's range of validity
  EXPECT_NEAR(m.FF, green, 0.01);
}

// Suns-V_oc of the textbook junction: fem::open_circuits from full light
// down four decades. Each level's V_oc is where the current vanishes
// (checked by a solve there) and follows the ideal diode,
// V_oc = kT/q ln(s J_sc / J_0 + 1), with J_0 of the junction (Sze & Ng,
// Physics of Semiconductor Devices, 3rd ed., 2007, eq. 2.65) and the
// photocurrent s J_sc by superposition (low injection).
TEST(SunsVoc, OpenCircuitsFollowTheIdealDiodeOverFourDecades)
{
  const Junction j;
  dealii::Triangulation<2> tria;
  j.mesh(tria);
  const double G = 1e20; // cm^-3 s^-1, as in IdealDiodeFillFactorFollowsGreen
  DeviceModel dev(T, {{ids::absorber, j.n_side()}, {ids::absorber_right, j.p_side()}},
                  {ids::absorber, ids::absorber_right}, j.n_contact(), j.p_contact(), SurfaceParameters(),
                  SurfaceParameters(), [G](double, double) { return G; });
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const std::vector<JVPoint> curve = light_jv(solver, 0.01);
  const JVMetrics            m     = jv_metrics(curve);
  ASSERT_TRUE(m.valid);
  ASSERT_TRUE(move_to(solver, m.Voc, 1.0, 8).converged);
  const std::vector<double>      levels{0.001, 1.0, 0.01, 0.1}; // any order
  const std::vector<OpenCircuit> oc = open_circuits(solver, levels, slope_at_open_circuit(curve), 8);
  ASSERT_EQ(oc.size(), levels.size());
  const double J0 = j.saturation_current();
  for (const OpenCircuit &p : oc)
    {
      ASSERT_TRUE(p.converged) << p.diagnostic;
      // The terminal current is per footprint (the strip's length L), J_0
      // per cross-section (1 um): as in PnJunction.IdealDiodeLaw.
      const double ideal = Vt * std::log(p.light * m.Jsc * j.L / J0 + 1);
      std::printf("light %6.3f: V_oc %.6f V, ideal diode %.6f V, %u Newton steps\n", p.light, p.voltage, ideal,
                  p.newton_iterations);
      EXPECT_NEAR(p.voltage, ideal, 1e-3);
    }
  EXPECT_EQ(oc.front().light, 1.0); // from the largest level down
  EXPECT_EQ(oc.back().light, 0.001);
  // kT/q ln 10 per decade (measured 0.05953 V; J_0 cancels).
  for (std::size_t i = 0; i + 1 < oc.size(); ++i)
    EXPECT_NEAR(oc[i].voltage - oc[i + 1].voltage, Vt * std::log(10.0), 2e-4);
  for (const OpenCircuit &p : oc)
    {
      ASSERT_TRUE(move_to(solver, p.voltage, p.light, 8).converged);
      EXPECT_LT(std::abs(solver.terminal_current().total()), 1e-3 * p.light * m.Jsc) << p.light;
    }
}

// A film that conducts very poorly collects its photocurrent only by drift
// in the built-in field, which falls linearly with bias: the J-V is nearly
// a straight line and FF approaches 0.25 (common practice, no source).
TEST(SolarCell, ResistiveFilmGivesStraightJV)
{
  Material m;
  m.mu_n = m.mu_p = 1e-5;
  m.tau_n = m.tau_p = 1e-6;
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 1.0, 0.4, 0.0, 0.002, 1.15, 0.02);
  ContactParameters e, h;
  e.work_function = 4.0, e.S_n = 1e7, e.S_p = 0;
  h.work_function = 5.4, h.S_n = 0, h.S_p = 1e7;
  DeviceModel dev(T, {{ids::absorber, m}}, {ids::absorber}, e, h, SurfaceParameters(), SurfaceParameters(),
                  [](double, double) { return 1e21; });
  DriftDiffusionSolver solver(tria, dev, tight_numerics());
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const JVMetrics jm = jv_metrics(light_jv(solver, 0.02));
  ASSERT_TRUE(jm.valid);
  std::printf("resistive film: Jsc = %.4f mA/cm2, V_oc = %.3f V, FF = %.4f\n", jm.Jsc, jm.Voc, jm.FF);
  EXPECT_GT(jm.FF, 0.24);
  EXPECT_LT(jm.FF, 0.30);
}
