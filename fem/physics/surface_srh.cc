#include "fem/physics/surface_srh.h"

#include "base/entries.h"
#include "fem/device.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry electron_velocity{"Electron recombination velocity", 0.0, "cm/s", Range::closed(0.0, 1e12),
                                        "SRH surface recombination velocity S_n in cm/s"};
    const NumberEntry hole_velocity{"Hole recombination velocity", 0.0, "cm/s", Range::closed(0.0, 1e12),
                                    "SRH surface recombination velocity S_p in cm/s"};
    // Whether the level lies inside the absorber's gap is checked with the
    // whole case (simulator/case_file.cc), where the absorber is known.
    const NumberEntry trap_level{"Trap level", 0.0, "eV", Range::closed(-5.0, 5.0),
                                 "Surface trap energy in eV from midgap of the adjacent material; it must also "
                                 "lie inside the gap, |value| < E_g/2"};
  } // namespace

  SurfaceSrhChannel::SurfaceSrhChannel(double S_n_, double S_p_, double n1_, double p1_, double ni2_)
    : S_n(S_n_), S_p(S_p_), n1(n1_), p1(p1_), ni2(ni2_)
  {}

  void
  SurfaceSrhChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                        const SurfaceParameters &d) const
  {
    declare(prm, section, electron_velocity, d.S_n);
    declare(prm, section, hole_velocity, d.S_p);
    declare(prm, section, trap_level, d.trap_level);
  }

  void
  SurfaceSrhChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                      SurfaceParameters &s) const
  {
    s.S_n        = get(prm, section, electron_velocity);
    s.S_p        = get(prm, section, hole_velocity);
    s.trap_level = get(prm, section, trap_level);
  }

  bool
  SurfaceSrhChannel::active(const SurfaceParameters &s) const
  {
    return s.S_n != 0 || s.S_p != 0;
  }

  void
  SurfaceSrhChannel::setup(const SurfaceParameters &s, const ChannelUnits &u, const double S0)
  {
    S_n = s.S_n / S0;
    S_p = s.S_p / S0;
    n1  = u.n1(s.trap_level / u.kT);
    p1  = u.p1(s.trap_level / u.kT);
    ni2 = u.ni2;
  }

  Rate
  SurfaceSrhChannel::rate(const double n, const double p) const
  {
    const double num = S_n * S_p * (n * p - ni2);
    const double den = S_n * (n + n1) + S_p * (p + p1);
    Rate r;
    if (den <= 0)
      return r;
    r.R     = num / den;
    r.dR_dn = (S_n * S_p * p * den - num * S_n) / (den * den);
    r.dR_dp = (S_n * S_p * n * den - num * S_p) / (den * den);
    return r;
  }
} // namespace backcomb::fem
