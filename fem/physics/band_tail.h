// Recombination through exponential band tails of localised states.
//
// Physics. Below the conduction band edge the density of tail states per
// unit energy falls off exponentially with the depth e = E_c - E,
//   g_c(e) = (N_tc / E_Uc) exp(-e / E_Uc),
// with N_tc the total tail density and E_Uc the characteristic (Urbach-like)
// energy; above the valence band edge likewise g_v(e) with e = E - E_v,
// N_tv and E_Uv. Every energy level acts as an independent single-level
// SRH centre (W. Shockley, W. T. Read, Phys. Rev. 87 (1952) 835) with the
// electron and hole capture coefficients C_n, C_p (cm^3/s), so that the
// net rate is the integral over the distribution (J. G. Simmons,
// G. W. Taylor, Phys. Rev. B 4 (1971) 502):
//   R = int g(E) C_n C_p (np - n_i^2) / (C_n (n + n1(E)) + C_p (p + p1(E))) dE,
//   n1(E) = N_c exp(-(E_c - E)/kT),  p1(E) = N_v exp(-(E - E_v)/kT).
// This is the usual SRH form (np - n_i^2) / ((n + n1)/C_p + (p + p1)/C_n)
// per level, multiplied out so that a zero capture coefficient switches the
// channel off instead of dividing by zero. R vanishes at np = n_i^2 and
// changes sign below it (net thermal generation).
//
// Quadrature (fixed, independent of n and p, so that the derivatives of
// the discrete sum are exactly the sums of the integrand's derivatives).
// Each tail is integrated over the whole gap, 0 <= e <= E_g (the tail
// states exist only between the band edges), split into M equal panels
// with M = ceil(E_g / min(E_U, kT)), each with the 4-point Gauss-Legendre
// rule. The panel width never exceeds the two scales on which the
// integrand varies: the tail's decay length E_U, and kT, over which the
// occupancy of a level switches from the conduction band's control to
// recombination near the quasi-Fermi levels. On each panel the 4-point rule
// is exact to degree 7; the integrand's relative error on a panel of one
// decay length is below 1e-6 (checked against a fine composite Simpson rule
// in tests/test_physics.cc). Nodes whose weight underflows to zero are
// dropped. Cost: 4M rate terms per tail and point, about 250 for
// E_g = 1.6 eV and E_U = 30 meV at 300 K (the solver's assembly grows in
// proportion; the channel is off by default).
//
// Limits. The charge trapped in the tail states is not added to Poisson's
// equation (valid while it is small against the doping or the space
// charge); the levels exchange carriers only with the bands (no hopping or
// tunnelling between tail states); C_n and C_p are the same for every
// level and for both tails; Boltzmann statistics as everywhere in the
// solver; the tails end at the opposite band edge instead of merging into
// the other tail or into deep defects.
//
// Entries, in the subsection "Recombination/Band tail" of a material
// section: Conduction tail density, Conduction tail energy, Valence tail
// density, Valence tail energy, Electron capture coefficient, Hole capture
// coefficient. Both densities default to 0: the channel is off.
#pragma once

#include "fem/physics/recombination_channel.h"

#include <vector>

namespace backcomb::fem
{
  class BandTailChannel : public RecombinationChannel
  {
  public:
    // The subsection of a material section holding the entries.
    static constexpr const char *subsection = "Band tail";

    // The parameters in physical units (eV, cm^-3, cm^3/s).
    struct Parameters
    {
      double conduction_density = 0;    // N_tc, cm^-3
      double conduction_energy  = 0.03; // E_Uc, eV
      double valence_density    = 0;    // N_tv, cm^-3
      double valence_energy     = 0.03; // E_Uv, eV
      double C_n                = 1e-9; // cm^3/s
      double C_p                = 1e-9; // cm^3/s
    };
    // Reads them from (and writes them to) Material::model_numbers.
    static Parameters parameters_of(const Material &m);
    static void       store(const Parameters &p, Material &m);

    std::string name() const override { return "band_tail"; }
    std::string field_name() const override { return "R_band_tail_per_cm3_s"; }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const Material &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          Material &m) const override;
    bool active(const Material &m) const override;
    void setup(const Material &m, const ChannelUnits &units) override;
    Rate rate(double n, double p) const override;
    // Sum over the levels of the single-level low-injection limit:
    // electrons in p-type, C_n C_p p0 / (C_n n1 + C_p (p0 + p1)) per state
    // (n << n1 there); holes in n-type, C_n C_p n0 / (C_n (n0 + n1) + C_p p1).
    // Zero in an undoped film (n0 = p0 = 0), like radiative and Auger.
    InverseLifetimes low_injection(double n0, double p0) const override;

    // The quadrature nodes in the units of setup(): n1, p1 and the weight
    // g(E) dE (density of states at the node times its quadrature weight).
    struct Node
    {
      double n1, p1, weight;
    };
    const std::vector<Node> &nodes() const { return nodes_; }

  private:
    double            C_n = 0, C_p = 0, ni2 = 0;
    std::vector<Node> nodes_;
  };
} // namespace backcomb::fem
