// The physics models of fem/physics/ one by one: every recombination
// channel against its textbook rate law evaluated here independently, its
// derivatives against central finite differences, and its zero at
// np = n_i^2; the band-tail channel also against its narrow-tail limit and
// against an independent fine Simpson integration; the registries; the
// contact models' boundary behaviour. All parameter values are round
// generic numbers, not data of a real material.
#include "base/entries.h"
#include "base/errors.h"
#include "fem/constants.h"
#include "fem/device.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "fem/physics/auger.h"
#include "fem/physics/band_tail.h"
#include "fem/physics/contact_model.h"
#include "fem/physics/generation_model.h"
#include "fem/physics/radiative.h"
#include "fem/physics/recombination_channel.h"
#include "fem/physics/registry.h"
#include "fem/physics/srh.h"
#include "fem/physics/surface_srh.h"
#include "simulator/guard_rails.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <array>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <iterator>
#include <functional>
#include <set>
#include <string>
#include <vector>

using namespace backcomb;
using namespace backcomb::fem;

namespace
{
  constexpr double T = 300; // K

  double
  kT()
  {
    return constants::k_B * T / constants::q; // eV
  }

  // Generic absorber: E_g = 1.6 eV, N_c = N_v = 2e18 cm^-3 (the defaults),
  // p-type 1e16 cm^-3.
  Material
  generic_material()
  {
    Material m;
    m.acceptors        = 1e16;
    m.tau_n            = 1e-7;
    m.tau_p            = 3e-7;
    m.trap_level       = 0.1;
    m.B_rad            = 2e-10;
    m.photon_recycling = 0.3;
    m.C_n              = 2e-29;
    m.C_p              = 5e-30;
    return m;
  }

  // n_i^2 = Nc Nv exp(-E_g/kT) (S. M. Sze, K. K. Ng, Physics of
  // Semiconductor Devices, 3rd ed. 2007, eq. 1.22 squared).
  double
  ni2_of(const Material &m)
  {
    return m.Nc * m.Nv * std::exp(-m.band_gap / kT());
  }

  // (n, p) in cm^-3 spanning low injection in p-type material, high
  // injection, n-type low injection and reverse bias (np < n_i^2).
  std::vector<std::pair<double, double>>
  operating_points(const Material &m)
  {
    const double ni = std::sqrt(ni2_of(m));
    return {{1e8, 1e16}, {1e12, 1e16}, {1e15, 1.01e15}, {3e16, 2e16}, {1e16, 1e5}, {1e-3 * ni, 1e-2 * ni},
            {1e-6 * ni, 1e3 * ni}};
  }

  // Central finite differences of R with a relative step, compared with the
  // analytic derivatives (relative tolerance 1e-6 of the larger of the two
  // derivatives' scales, R/n and R/p, so that a derivative that is tiny by
  // cancellation is not compared at round-off level).
  void
  expect_derivatives(const std::function<Rate(double, double)> &rate, const double n, const double p,
                     const std::string &what)
  {
    const Rate   r  = rate(n, p);
    const double hn = 1e-5 * n, hp = 1e-5 * p;
    const double fd_n = (rate(n + hn, p).R - rate(n - hn, p).R) / (2 * hn);
    const double fd_p = (rate(n, p + hp).R - rate(n, p - hp).R) / (2 * hp);
    const double scale_n = std::max(std::abs(r.dR_dn), std::abs(r.R) / n);
    const double scale_p = std::max(std::abs(r.dR_dp), std::abs(r.R) / p);
    EXPECT_NEAR(r.dR_dn, fd_n, 1e-6 * scale_n) << what << " dR/dn at n = " << n << ", p = " << p;
    EXPECT_NEAR(r.dR_dp, fd_p, 1e-6 * scale_p) << what << " dR/dp at n = " << n << ", p = " << p;
  }

  // A channel of the registry set up for `m` in physical units.
  std::unique_ptr<RecombinationChannel>
  physical_channel(const std::string &name, const Material &m)
  {
    auto channel = bulk_recombination_channels().create(name);
    channel->setup(m, ChannelUnits::physical(m, T));
    return channel;
  }

  // One band tail by Simpson's rule on `intervals` (even) panels over the
  // whole gap: int_0^Eg N/E_U exp(-e/E_U) C_n C_p (np - ni2) /
  // (C_n (n + n1(e)) + C_p (p + p1(e))) de, with n1, p1 of a level at
  // depth e below E_c (conduction tail) or above E_v (valence tail).
  double
  simpson_tail(const Material &m, const double N, const double E_U, const bool conduction, const double C_n,
               const double C_p, const double n, const double p, const unsigned intervals)
  {
    const double Eg = m.band_gap, ni2 = ni2_of(m);
    const double h  = Eg / intervals;
    double       sum = 0;
    for (unsigned k = 0; k <= intervals; ++k)
      {
        const double e  = k * h;
        // Distance of the level from the conduction and valence band edges.
        const double to_c = conduction ? e : Eg - e;
        const double to_v = Eg - to_c;
        const double n1   = m.Nc * std::exp(-to_c / kT());
        const double p1   = m.Nv * std::exp(-to_v / kT());
        const double f    = N / E_U * std::exp(-e / E_U) * C_n * C_p * (n * p - ni2) /
                         (C_n * (n + n1) + C_p * (p + p1));
        sum += (k == 0 || k == intervals ? 1 : (k % 2 ? 4 : 2)) * f;
      }
    return sum * h / 3;
  }

  Material
  with_tails(Material m, const double N_c, const double E_c, const double N_v, const double E_v,
             const double C_n = 1e-8, const double C_p = 3e-9)
  {
    BandTailChannel::Parameters t;
    t.conduction_density = N_c;
    t.conduction_energy  = E_c;
    t.valence_density    = N_v;
    t.valence_energy     = E_v;
    t.C_n                = C_n;
    t.C_p                = C_p;
    BandTailChannel::store(t, m);
    return m;
  }
} // namespace

// ------------------------------------------------------------ bulk channels

// SRH through one level: R = (np - n_i^2) / (tau_p (n + n1) + tau_n (p + p1)),
// n1 = Nc exp((E_t - E_c)/kT), p1 = Nv exp((E_v - E_t)/kT) (W. Shockley,
// W. T. Read, Phys. Rev. 87 (1952) 835, eq. 3.6 from memory; R. N. Hall,
// Phys. Rev. 87 (1952) 387).
TEST(PhysicsChannels, SrhAgainstShockleyReadHall)
{
  const Material m    = generic_material();
  const auto     srh  = physical_channel("srh", m);
  const double   ni2  = ni2_of(m);
  const double   Et_c = 0.5 * m.band_gap - m.trap_level; // E_c - E_t, eV
  const double   n1   = m.Nc * std::exp(-Et_c / kT());
  const double   p1   = m.Nv * std::exp(-(m.band_gap - Et_c) / kT());
  for (const auto &[n, p] : operating_points(m))
    {
      const double expected = (n * p - ni2) / (m.tau_p * (n + n1) + m.tau_n * (p + p1));
      EXPECT_NEAR(srh->rate(n, p).R, expected, 1e-12 * std::abs(expected)) << n << " " << p;
      expect_derivatives([&](double a, double b) { return srh->rate(a, b); }, n, p, "srh");
    }
}

// Radiative: R = (1 - P_r) B (np - n_i^2) (W. van Roosbroeck, W. Shockley,
// Phys. Rev. 94 (1954) 1558, net of the recycled fraction).
TEST(PhysicsChannels, RadiativeAgainstBandToBandLaw)
{
  const Material m   = generic_material();
  const auto     rad = physical_channel("radiative", m);
  for (const auto &[n, p] : operating_points(m))
    {
      const double expected = (1 - m.photon_recycling) * m.B_rad * (n * p - ni2_of(m));
      EXPECT_NEAR(rad->rate(n, p).R, expected, 1e-12 * std::abs(expected) + 1e-300);
      expect_derivatives([&](double a, double b) { return rad->rate(a, b); }, n, p, "radiative");
    }
  Material off = m;
  off.B_rad    = 0;
  EXPECT_FALSE(bulk_recombination_channels().create("radiative")->active(off));
}

// Auger: R = (C_n n + C_p p)(np - n_i^2) (S. M. Sze, K. K. Ng, Physics of
// Semiconductor Devices, 3rd ed. 2007, section 1.5.4).
TEST(PhysicsChannels, AugerAgainstThreeParticleLaw)
{
  const Material m     = generic_material();
  const auto     auger = physical_channel("auger", m);
  for (const auto &[n, p] : operating_points(m))
    {
      const double expected = (m.C_n * n + m.C_p * p) * (n * p - ni2_of(m));
      EXPECT_NEAR(auger->rate(n, p).R, expected, 1e-12 * std::abs(expected));
      expect_derivatives([&](double a, double b) { return auger->rate(a, b); }, n, p, "auger");
    }
}

// Surface SRH per unit area: U = (np - n_i^2) / ((n + n1)/S_p + (p + p1)/S_n)
// (Shockley and Read 1952 with capture velocities in place of inverse
// lifetimes).
TEST(PhysicsChannels, SurfaceSrhAgainstShockleyReadHall)
{
  const Material    m = generic_material();
  SurfaceParameters s;
  s.S_n        = 100;
  s.S_p        = 30;
  s.trap_level = -0.2;
  auto surface = surface_recombination_channels().create("srh");
  ASSERT_TRUE(surface->active(s));
  surface->setup(s, ChannelUnits::physical(m, T), 1.0);
  const double n1 = m.Nc * std::exp(-(0.5 * m.band_gap - s.trap_level) / kT());
  const double p1 = m.Nv * std::exp(-(0.5 * m.band_gap + s.trap_level) / kT());
  for (const auto &[n, p] : operating_points(m))
    {
      const double expected = (n * p - ni2_of(m)) / ((n + n1) / s.S_p + (p + p1) / s.S_n);
      EXPECT_NEAR(surface->rate(n, p).R, expected, 1e-12 * std::abs(expected));
      expect_derivatives([&](double a, double b) { return surface->rate(a, b); }, n, p, "surface srh");
    }
  EXPECT_FALSE(surface->active(SurfaceParameters()));
}

// Band tails: the rate against the integral of the single-level SRH rate
// over the exponential distribution (J. G. Simmons, G. W. Taylor, Phys.
// Rev. B 4 (1971) 502), evaluated here by Simpson's rule on 200000 panels
// per tail; the channel's 4-point Gauss-Legendre panels must agree to 1e-6.
TEST(PhysicsChannels, BandTailAgainstFineSimpsonIntegration)
{
  const double C_n = 1e-8, C_p = 3e-9;
  // Tails narrower and wider than kT, one or both present.
  const std::vector<std::array<double, 4>> tails = {
    {{1e17, 0.02, 0, 0.03}}, {{1e17, 0.05, 2e16, 0.035}}, {{0, 0.03, 1e18, 0.1}}};
  for (const auto &[Nc_tail, Ec_tail, Nv_tail, Ev_tail] : tails)
    {
      const Material m    = with_tails(generic_material(), Nc_tail, Ec_tail, Nv_tail, Ev_tail, C_n, C_p);
      const auto     tail = physical_channel("band_tail", m);
      double         worst = 0;
      for (const auto &[n, p] : operating_points(m))
        {
          const double expected =
            (Nc_tail > 0 ? simpson_tail(m, Nc_tail, Ec_tail, true, C_n, C_p, n, p, 200000) : 0.0) +
            (Nv_tail > 0 ? simpson_tail(m, Nv_tail, Ev_tail, false, C_n, C_p, n, p, 200000) : 0.0);
          worst = std::max(worst, std::abs(tail->rate(n, p).R / expected - 1));
          EXPECT_NEAR(tail->rate(n, p).R, expected, 1e-6 * std::abs(expected))
            << "E_Uc = " << Ec_tail << ", E_Uv = " << Ev_tail << ", n = " << n << ", p = " << p;
          expect_derivatives([&](double a, double b) { return tail->rate(a, b); }, n, p, "band tail");
        }
      std::printf("band tails E_Uc = %g eV, E_Uv = %g eV: %zu nodes, largest relative difference from "
                  "Simpson %.2e\n",
                  Ec_tail, Ev_tail, dynamic_cast<const BandTailChannel &>(*tail).nodes().size(), worst);
    }
}

// Narrow-tail limit: as E_U -> 0 the conduction tail collapses onto a
// single level at E_c, i.e. SRH with tau_n = 1/(C_n N), tau_p = 1/(C_p N),
// n1 = Nc, p1 = Nv exp(-E_g/kT). Analytic: the tail average of the
// single-level rate F(e) is F(0) + E_U F'(0) + O(E_U^2), so the relative
// difference falls in proportion to E_U (first moment of the exponential
// distribution).
TEST(PhysicsChannels, BandTailNarrowLimitIsSingleLevelSrh)
{
  const double N = 1e17, C_n = 1e-8, C_p = 3e-9;
  const Material base = generic_material();
  const double ni2 = ni2_of(base);
  const double n1 = base.Nc, p1 = base.Nv * std::exp(-base.band_gap / kT());
  for (const auto &[n, p] : operating_points(base))
    {
      const double srh = (n * p - ni2) / ((n + n1) / (C_p * N) + (p + p1) / (C_n * N));
      double       error[2];
      const double E_U[2] = {1e-3, 1e-4};
      for (unsigned k = 0; k < 2; ++k)
        {
          const auto tail = physical_channel("band_tail", with_tails(base, N, E_U[k], 0, 0.03, C_n, C_p));
          error[k]        = tail->rate(n, p).R / srh - 1;
        }
      // Near E_c the single-level rate grows like exp(e/kT) (n1 >> n), so
      // the first-order difference is E_U/kT.
      std::printf("narrow tail at n = %.3g, p = %.3g: R/R_srh - 1 = %.4e (E_U = 1 meV), %.4e (0.1 meV); "
                  "E_U/kT = %.4e, %.4e\n",
                  n, p, error[0], error[1], 1e-3 / kT(), 1e-4 / kT());
      EXPECT_NEAR(error[0], 1e-3 / kT(), 0.1 * 1e-3 / kT()) << n << " " << p;
      EXPECT_NEAR(error[1], 1e-4 / kT(), 0.1 * 1e-4 / kT()) << n << " " << p;
    }
}

// Every channel vanishes in equilibrium, np = n_i^2 (detailed balance).
TEST(PhysicsChannels, ZeroRateInEquilibrium)
{
  const Material m   = with_tails(generic_material(), 1e17, 0.04, 1e17, 0.06);
  const double   ni  = std::sqrt(ni2_of(m));
  for (const std::string &name : bulk_recombination_channels().names())
    {
      const auto channel = physical_channel(name, m);
      for (const double n : {1e-3 * ni, ni, 1e4 * ni})
        {
          const double p = ni * ni / n;
          // Compared with the rate at twice the product, which is of the
          // order of the channel's scale at these densities.
          const double scale = std::abs(channel->rate(n, 2 * p).R);
          EXPECT_LE(std::abs(channel->rate(n, p).R), 1e-9 * scale) << name << " at n = " << n;
        }
    }
  SurfaceParameters s;
  s.S_n = s.S_p = 1e3;
  auto surface  = surface_recombination_channels().create("srh");
  surface->setup(s, ChannelUnits::physical(m, T), 1.0);
  EXPECT_LE(std::abs(surface->rate(ni, ni).R), 1e-9 * std::abs(surface->rate(ni, 2 * ni).R));
}

// The low-injection lifetime each channel reports equals the limit of
// R / delta_n at the doping (analytic: 1/tau = dR/dn at n = n_i^2/p0 as
// delta_n -> 0, evaluated here as a small finite difference), and the
// guard rails add the channels' 1/tau.
TEST(PhysicsChannels, LowInjectionLifetimesAddUp)
{
  const Material m  = with_tails(generic_material(), 1e17, 0.04, 1e17, 0.06);
  const double   p0 = m.acceptors, n0 = ni2_of(m) / p0;
  double         sum = 0;
  for (const std::string &name : bulk_recombination_channels().names())
    {
      const auto   channel = physical_channel(name, m);
      const double dn      = 1e2; // cm^-3, << p0
      const double slope   = channel->rate(n0 + dn, p0).R / dn;
      const double reported = channel->low_injection(0, p0).electrons;
      sum += reported;
      if (name == "srh")
        {
          // The SRH channel reports the deep-level limit 1/tau_n.
          EXPECT_DOUBLE_EQ(reported, 1 / m.tau_n);
          continue;
        }
      EXPECT_NEAR(reported, slope, 1e-4 * slope) << name;
    }
  const auto [tau_n, tau_p] = simulator::minority_lifetimes(m, T);
  EXPECT_NEAR(1 / tau_n, sum, 1e-12 * sum);
  // The tails shorten the electron lifetime: without them it is longer.
  const auto without = simulator::minority_lifetimes(generic_material(), T);
  EXPECT_GT(without.first, tau_n);
  EXPECT_DOUBLE_EQ(without.second, tau_p); // holes are majority carriers
}

// ---------------------------------------------------------------- registries

TEST(PhysicsRegistry, EveryRegisteredNameConstructs)
{
  std::set<std::string> fields;
  for (const std::string &name : bulk_recombination_channels().names())
    {
      const auto channel = bulk_recombination_channels().create(name);
      EXPECT_EQ(channel->name(), name);
      // One VTK field per channel, named after it, unique.
      EXPECT_EQ(channel->field_name(), "R_" + name + "_per_cm3_s");
      EXPECT_TRUE(fields.insert(channel->field_name()).second);
    }
  EXPECT_EQ(bulk_recombination_channels().selection(), "srh|radiative|auger|band_tail");
  for (const std::string &name : surface_recombination_channels().names())
    EXPECT_EQ(surface_recombination_channels().create(name)->name(), name);
  for (const std::string &name : contact_models().names())
    EXPECT_EQ(contact_models().create(name)->name(), name);
  for (const std::string &name : generation_models().names())
    EXPECT_EQ(generation_models().create(name)->name(), name);
  // The selection patterns of the case file: the existing texts.
  EXPECT_EQ(contact_models().selection(), "selective|ohmic");
  EXPECT_EQ(generation_models().selection(), "spectrum|uniform|depth table");
}

TEST(PhysicsRegistry, UnknownNamesAreInputErrors)
{
  const auto message = [](const std::function<void()> &f) {
    try
      {
        f();
      }
    catch (const InputError &e)
      {
        return std::string(e.what());
      }
    return std::string("no InputError");
  };
  const std::string contact =
    message([] { contact_models().create("tunnel", "Hole contact/Model"); });
  EXPECT_NE(contact.find("Hole contact/Model"), std::string::npos) << contact;
  EXPECT_NE(contact.find("tunnel"), std::string::npos) << contact;
  EXPECT_NE(contact.find("selective, ohmic"), std::string::npos) << contact;
  const std::string channel = message([] { bulk_recombination_channels().create("hopping"); });
  EXPECT_NE(channel.find("hopping"), std::string::npos) << channel;
  EXPECT_NE(channel.find("srh, radiative, auger, band_tail"), std::string::npos) << channel;
  const std::string generation = message([] { generation_models().create("laser"); });
  EXPECT_NE(generation.find("laser"), std::string::npos) << generation;
  EXPECT_FALSE(surface_recombination_channels().contains("hopping"));

  // A device whose contact names an unknown model is refused by name.
  ContactParameters bad;
  bad.model = "tunnel";
  const std::string device = message([&] {
    DeviceModel(T, {{0, Material()}}, {0}, bad, ContactParameters(), SurfaceParameters(), SurfaceParameters(),
                nullptr);
  });
  EXPECT_NE(device.find("Electron contact/Model"), std::string::npos) << device;
}

// The band-tail entries: declared in their own subsection of a material
// section with unit and range, default off, checked against the range.
TEST(PhysicsRegistry, BandTailEntriesDefaultOffAndChecked)
{
  dealii::ParameterHandler prm;
  Material::declare_parameters(prm, "Absorber", Material());
  prm.parse_input_from_string("subsection Absorber\nend\n");
  Material m;
  m.parse_parameters(prm, "Absorber");
  EXPECT_FALSE(bulk_recombination_channels().create("band_tail")->active(m));
  EXPECT_EQ(entry_unit("Absorber/Recombination/Band tail/Conduction tail energy"), "eV");
  EXPECT_EQ(entry_unit("Absorber/Recombination/SRH/Electron lifetime"), "s");

  prm.parse_input_from_string("subsection Absorber\n subsection Recombination\n subsection Band tail\n"
                              "  set Conduction tail density = 1e17\n  set Conduction tail energy = 0.04\n"
                              " end\n end\nend\n");
  m.parse_parameters(prm, "Absorber");
  EXPECT_TRUE(bulk_recombination_channels().create("band_tail")->active(m));
  EXPECT_EQ(BandTailChannel::parameters_of(m).conduction_energy, 0.04);

  prm.parse_input_from_string("subsection Absorber\n subsection Recombination\n subsection Band tail\n"
                              "  set Valence tail energy = 0\n end\n end\nend\n");
  try
    {
      m.parse_parameters(prm, "Absorber");
      ADD_FAILURE() << "a zero tail energy was accepted";
    }
  catch (const InputError &e)
    {
      EXPECT_NE(std::string(e.what()).find("Absorber/Recombination/Band tail/Valence tail energy = 0"),
                std::string::npos)
        << e.what();
    }
}

// ------------------------------------------------------------------ contacts

// Selective: flux S (c - c0) per carrier with derivative S; the ohmic
// model pins the quasi-Fermi levels instead.
TEST(PhysicsContacts, SelectiveFluxAndOhmicPinning)
{
  ContactParameters c;
  c.S_n     = 1e5;
  c.S_p     = 20;
  auto sel  = contact_models().create("selective");
  sel->setup(c, 10.0); // velocity unit 10 cm/s
  EXPECT_FALSE(sel->pins_quasi_fermi_levels());
  const ContactFlux f = sel->flux(3e10, 2e5, 1e10, 4e5);
  EXPECT_DOUBLE_EQ(f.electrons, 1e4 * (3e10 - 1e10));
  EXPECT_DOUBLE_EQ(f.holes, 2 * (2e5 - 4e5));
  EXPECT_DOUBLE_EQ(f.d_electrons_dn, 1e4);
  EXPECT_DOUBLE_EQ(f.d_holes_dp, 2);
  EXPECT_EQ(f.d_electrons_dp, 0);
  EXPECT_EQ(f.d_holes_dn, 0);
  EXPECT_TRUE(contact_models().create("ohmic")->pins_quasi_fermi_levels());
}

// ------------------------------------------------------------ in the device

// The band-tail channel in the solver: a long intrinsic strip with ohmic
// contacts at midgap, lit uniformly, with SRH switched off in effect (1 s
// lifetimes) and the band tails on. Far from the contacts (more than ten
// ambipolar diffusion lengths, here about 1.6 um) nothing flows, so the
// tails must recombine every generated pair at the uniform density n = p
// that solves R(n, n) = G, found here by bisection on the Simpson integral
// (analytic: uniform steady state of the continuity equations). The power
// balance carries the channel under its name and closes, and the VTK file
// has its field.
TEST(PhysicsDevice, BandTailBalancesGenerationInLongStrip)
{
  const double C_n = 1e-8, C_p = 1e-8, G = 1e21;
  Material     m = with_tails(Material(), 1e17, 0.03, 1e17, 0.04, C_n, C_p);
  m.mu_n = m.mu_p = 1.0;
  m.tau_n = m.tau_p = 1.0;
  // The total rate at n = p: the tails plus SRH with 1 s lifetimes through
  // a midgap level (n1 = p1 = n_i), which adds about n / (2 s).
  const double ni2   = ni2_of(m);
  const auto   R_all = [&](const double n) {
    return simpson_tail(m, 1e17, 0.03, true, C_n, C_p, n, n, 20000) +
           simpson_tail(m, 1e17, 0.04, false, C_n, C_p, n, n, 20000) +
           (n * n - ni2) / (m.tau_p * (n + std::sqrt(ni2)) + m.tau_n * (n + std::sqrt(ni2)));
  };
  // R(n, n) increases with n: bisection in ln n.
  double lo = 1e6, hi = 1e18;
  for (unsigned k = 0; k < 200; ++k)
    {
      const double mid = std::sqrt(lo * hi);
      (R_all(mid) < G ? lo : hi) = mid;
    }
  const double n_expected = std::sqrt(lo * hi);

  dealii::Triangulation<2> tria;
  const double             length = 40.0; // um
  test_support::make_strip(tria, length, 0.4, 0.0, 0.01, 1.3, 1.0);
  ContactParameters c;
  c.model         = "ohmic";
  c.work_function = m.electron_affinity + 0.5 * m.band_gap; // midgap, Nc = Nv
  DeviceModel dev(T, {{geometry::ids::absorber, m}}, {geometry::ids::absorber}, c, c, SurfaceParameters(),
                  SurfaceParameters(), [G](double, double) { return G; });
  ASSERT_EQ(dev.region(geometry::ids::absorber).channels.size(), 2u); // srh and band_tail
  NumericsParameters numerics;
  numerics.tolerance      = 1e-10;
  numerics.max_iterations = 200;
  DriftDiffusionSolver solver(tria, dev, numerics);
  ASSERT_TRUE(solver.solve_equilibrium().converged);
  ASSERT_TRUE(illuminate(solver, 1.0, 12).converged);

  // Densities at the nodes, from the state (psi, phi_n, phi_p).
  const ScaledRegion &r  = dev.region(geometry::ids::absorber);
  const auto         &u  = solver.state();
  const auto         &fe = solver.dof_handler().get_fe();
  std::vector<dealii::types::global_dof_index> idx(fe.n_dofs_per_cell());
  double worst = 0;
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    {
      cell->get_dof_indices(idx);
      for (unsigned v = 0; v < 4; ++v)
        {
          if (std::abs(cell->vertex(v)[0] - 0.5 * length) > 2.0)
            continue;
          const double psi = u[idx[fe.component_to_system_index(0, v)]];
          const double phn = u[idx[fe.component_to_system_index(1, v)]];
          const double php = u[idx[fe.component_to_system_index(2, v)]];
          const double n   = std::exp(psi - phn + r.a_n) * dev.scaling.N0;
          const double p   = std::exp(php - psi + r.a_p) * dev.scaling.N0;
          worst = std::max({worst, std::abs(n / n_expected - 1), std::abs(p / n_expected - 1)});
        }
    }
  std::printf("strip centre with band tails: n = p expected %.6e cm^-3, largest relative deviation %.2e\n",
              n_expected, worst);
  EXPECT_LT(worst, 1e-5);

  const PowerBalance b = solver.power_balance();
  ASSERT_EQ(b.bulk_recombination.count("band_tail"), 1u);
  // The tails take most of the free energy (the rest is lost next to the
  // contacts).
  EXPECT_GT(b.bulk_recombination.at("band_tail"), 0.5 * b.input);
  EXPECT_LT(b.bulk_recombination.at("srh"), 1e-3 * b.bulk_recombination.at("band_tail"));
  EXPECT_NEAR(b.residual(), 0, 1e-6 * b.input);

  const std::string vtu = "band_tail_fields.vtu";
  solver.write_fields(vtu);
  std::ifstream     in(vtu);
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(text.find("Name=\"R_band_tail_per_cm3_s\""), std::string::npos);
  EXPECT_NE(text.find("Name=\"R_auger_per_cm3_s\""), std::string::npos);
  std::remove(vtu.c_str());
}
