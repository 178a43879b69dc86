// Photon recycling as transport coupled to the drift-diffusion solve
// (fem/recycling_operator.h, fem/recycling_coupling.cc): the outer
// iteration converges to a self-consistent state, reproduces the local
// model where the two must agree, keeps detailed balance and closes the
// free-energy balance.
#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "fem/radiative_emission.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;

namespace
{
  const double Vt = constants::k_B * 300.0 / constants::q;

  // Re-absorption in the emitting column only, with probability p: the
  // transport model's local limit.
  class SameColumn : public RecyclingOperator
  {
  public:
    explicit SameColumn(double p) : p(p) {}
    std::vector<double>
    reabsorbed(const std::vector<double> &e, PhotonBalance *b) const override
    {
      std::vector<double> g(e.size());
      for (std::size_t i = 0; i < e.size(); ++i)
        g[i] = p * e[i];
      if (b)
        for (const double x : e)
          b->emitted += x / e.size(), b->reabsorbed += p * x / e.size(), b->escaped_top += (1 - p) * x / e.size();
      return g;
    }

  private:
    double p;
  };

  // A p-type strip (1e16 cm^-3) with ohmic contacts at both ends in which
  // radiative recombination dominates: B = 1e-9 cm^3/s gives a radiative
  // lifetime 1/(B N_A) = 0.1 us against 1 us of SRH (round numbers, not a
  // material).
  struct RadiativeStrip
  {
    Material          m;
    ContactParameters c;
    RadiativeStrip()
    {
      m.acceptors = 1e16;
      m.mu_n = m.mu_p = 10.0;
      m.tau_n = m.tau_p = 1e-6;
      m.B_rad           = 1e-9;
      c.model           = "ohmic";
      c.work_function   = m.electron_affinity + m.band_gap - Vt * std::log(m.Nv / m.acceptors);
    }
    DeviceModel
    device(double local_probability, double transported_probability) const
    {
      Material film         = m;
      film.photon_recycling = local_probability;
      DeviceModel d(300, {{ids::absorber, film}}, {ids::absorber}, c, c, SurfaceParameters(),
                    SurfaceParameters(), [](double, double) { return 1e20; });
      if (transported_probability > 0)
        d.recycling = [transported_probability](const std::vector<double> &) {
          return std::make_unique<SameColumn>(transported_probability);
        };
      return d;
    }
  };

  NumericsParameters
  tight()
  {
    NumericsParameters n;
    n.tolerance = 1e-11;
    return n;
  }

  // Electrons collected by both ends (mA/cm^2).
  double
  collected(const DriftDiffusionSolver &s)
  {
    const TerminalCurrent t = s.terminal_current();
    return t.electron_contact_electron - t.electron;
  }
} // namespace

// Re-absorbing a fraction p of the net emission in the column that emits
// it is, when the emission does not vary across the film thickness (a
// strip one cell thick), the same equation as the local model
// R = (1 - p) B (np - n_i^2) (an identity of the two models, no external
// source needed). The discretisations differ only inside a cell (the
// transport model spreads a column's emission evenly over the cell), so
// the collected current agrees to O(h^2): within 1e-4 on a coarse strip,
// and at least three times closer with every cell halved. p = 0.8, three
// biases.
TEST(RecyclingCoupling, SameColumnKernelIsTheLocalModel)
{
  const RadiativeStrip s;
  const DeviceModel    local = s.device(0.8, 0), transport = s.device(0, 0.8);
  double               difference[2][3];
  for (const unsigned level : {0u, 1u})
    {
      const double             f = level == 0 ? 1.0 : 0.5;
      dealii::Triangulation<2> tria;
      test_support::make_strip(tria, 5.0, 0.4, 0.0, 0.002 * f, 1.0 + 0.2 * f, 0.1 * f);
      DriftDiffusionSolver a(tria, local, tight()), b(tria, transport, tight());
      ASSERT_TRUE(b.transports_photons());
      ASSERT_TRUE(illuminate(a, 1.0, 8).converged);
      ASSERT_TRUE(illuminate(b, 1.0, 8).converged);
      unsigned k = 0;
      for (const double V : {0.0, 0.1, -0.1})
        {
          ASSERT_TRUE(move_to(a, V, 1.0, 8).converged);
          ASSERT_TRUE(move_to(b, V, 1.0, 8).converged);
          difference[level][k] = std::abs(collected(b) / collected(a) - 1);
          std::printf("%zu columns, V = %+.2f V: collected %.9f (local) %.9f (transport, same column) mA/cm2, "
                      "relative difference %.2e; %u outer iterations so far\n",
                      b.column_edges_um().size() - 1, V, collected(a), collected(b), difference[level][k],
                      b.recycling_iterations());
          EXPECT_LT(difference[level][k], 1e-4);
          ++k;
        }
    }
  for (unsigned k = 0; k < 3; ++k)
    EXPECT_LT(difference[1][k], difference[0][k] / 3);
}

// The converged state is self-consistent: the generation it re-emits is
// the generation it was solved with (to the outer tolerance), the photon
// balance of the operator closes, and the free-energy balance (Brendel et
// al., Appl. Phys. Lett. 93 (2008) 173503, eq. 4) closes with the
// re-absorbed photons' free energy booked against the radiative loss.
TEST(RecyclingCoupling, ConvergedStateIsSelfConsistentAndBalanced)
{
  const RadiativeStrip s;
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 5.0, 0.4, 0.0, 0.002, 1.2, 0.1);
  const DeviceModel    transport = s.device(0, 0.9);
  DriftDiffusionSolver b(tria, transport, tight());
  ASSERT_TRUE(illuminate(b, 1.0, 8).converged);
  ASSERT_TRUE(move_to(b, 0.05, 1.0, 8).converged);
  const auto e = b.column_emission(b.state());
  const auto g = b.recycled_generation();
  double      worst = 0, largest = 0;
  for (std::size_t i = 0; i < e.size(); ++i)
    worst = std::max(worst, std::abs(0.9 * e[i] - g[i])), largest = std::max(largest, std::abs(g[i]));
  std::printf("%zu columns; largest re-absorbed generation %.4e cm^-2 s^-1, largest inconsistency %.2e of it\n",
              e.size(), largest, worst / largest);
  EXPECT_LT(worst, 1e-7 * largest);
  const PhotonBalance pb = b.photon_balance();
  EXPECT_NEAR(pb.unbooked(), 0.0, 1e-12 * pb.emitted);
  const PowerBalance p = b.power_balance();
  std::printf("balance: input %.6g, recycled input %.6g, radiative (net) %.6g, residual %.3g mW/cm2\n", p.input,
              p.recycled_input, p.bulk_recombination.at("radiative"), p.residual());
  EXPECT_GT(p.recycled_input, 0);
  EXPECT_LT(std::abs(p.residual()), 1e-6 * p.input);
}

// Detailed balance (W. van Roosbroeck and W. Shockley, Phys. Rev. 94
// (1954) 1558): at thermal equilibrium the net radiative emission, and so
// the re-absorbed generation, vanish everywhere; against the gross
// equilibrium emission B n_i^2 t per column they are at round-off.
TEST(RecyclingCoupling, NothingIsRecycledAtEquilibrium)
{
  const RadiativeStrip s;
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, 5.0, 0.4, 0.0, 0.002, 1.2, 0.1);
  const DeviceModel    transport = s.device(0, 0.9);
  DriftDiffusionSolver b(tria, transport, tight());
  ASSERT_TRUE(b.solve_equilibrium().converged);
  ASSERT_TRUE(b.solve(0.0, 0.0).converged);
  const Material &m  = s.m;
  const double    ni = std::sqrt(m.Nc * m.Nv) * std::exp(-m.band_gap / (2 * Vt));
  const double gross = m.B_rad * ni * ni * 0.4e-4; // cm^-2 s^-1
  double       worst = 0;
  for (const double e : b.column_emission(b.state()))
    worst = std::max(worst, std::abs(e));
  for (const double g : b.recycled_generation())
    worst = std::max(worst, std::abs(g));
  std::printf("largest |net emission|, |re-absorbed| at equilibrium: %.2e of B n_i^2 t = %.3e cm^-2 s^-1\n",
              worst / gross, gross);
  EXPECT_LT(worst, 1e-9 * gross);
}

// A strip whose film recombines mostly radiatively, collected at both ends
// (minority electrons in a p-type film, ohmic contacts), 40 um long and
// 0.5 um thick on glass under air: with the emitted photons free to travel
// (the shipped MAPbI3 optical constants, van Roosbroeck-Shockley emission
// with a 15 meV Urbach tail), the collected fraction of uniform generation
// must exceed that of the local model given the same recycled share,
// which re-absorbs every recycled photon where it was emitted, and that
// one must exceed the fraction with no recycling (the diffusion-limited
// strip, (2L/g) tanh(g/2L) with L = sqrt(D tau_rad), printed for
// comparison). Three runs side by side in the output.
TEST(RecyclingCoupling, TravellingPhotonsCarryCarriersToDistantContacts)
{
  Material m;
  m.acceptors = 1e16;
  m.mu_n = m.mu_p = 10.0;
  m.tau_n = m.tau_p = 1e-5;
  EmissionOptions eo;
  eo.cutoff_eV        = m.band_gap;
  eo.urbach_energy_eV = 0.015;
  const EmissionSpectrum emission =
    van_roosbroeck_shockley(read_optical_constants(std::string(BACKCOMB_DATA_DIR) + "/absorber-nk-mapi.yml"), eo);
  m.B_rad = radiative_coefficient(emission, m);
  ContactParameters c;
  c.model         = "ohmic";
  c.work_function = m.electron_affinity + m.band_gap - Vt * std::log(m.Nv / m.acceptors);
  FilmOptics film;
  film.thickness_um = 0.5;
  const double L_um = 40;
  dealii::Triangulation<2> tria;
  test_support::make_strip(tria, L_um, film.thickness_um, 0.0, 0.002, 1.2, 0.5);
  const double G = 1e20;

  auto fraction = [&](double probability, bool transport, double *share) {
    Material f         = m;
    f.photon_recycling = probability;
    DeviceModel d(300, {{ids::absorber, f}}, {ids::absorber}, c, c, SurfaceParameters(), SurfaceParameters(),
                  [G](double, double) { return G; });
    if (transport)
      d.recycling = film_recycling(film, emission);
    DriftDiffusionSolver s(tria, d, tight());
    EXPECT_TRUE(illuminate(s, 1.0, 8).converged);
    if (share)
      *share = s.photon_balance().recycled_fraction();
    return collected(s) / s.generation_current();
  };
  double       A = 0;
  const double transported = fraction(0, true, &A);
  const double local_same  = fraction(A, false, nullptr);
  const double none        = fraction(0, false, nullptr);
  const double tau_rad     = 1 / (m.B_rad * m.acceptors);
  const double L = std::sqrt(m.mu_n * Vt * 1 / (1 / tau_rad + 1 / m.tau_n)) * 1e4; // um
  std::printf("B = %.3g cm^3/s (van Roosbroeck-Shockley), recycled share A = %.4f\n"
              "collected fraction: transport %.4f, local with P_r = A %.4f, no recycling %.4f "
              "(diffusion-limited strip with L = %.2f um: %.4f)\n",
              m.B_rad, A, transported, local_same, none, L, 2 * L / L_um * std::tanh(L_um / (2 * L)));
  EXPECT_GT(A, 0.5);
  EXPECT_GT(transported, 1.1 * local_same);
  EXPECT_GT(local_same, 1.1 * none);
  EXPECT_NEAR(none, 2 * L / L_um * std::tanh(L_um / (2 * L)), 0.02 * none);
}
