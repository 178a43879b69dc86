#include "fem/physics/srh.h"

#include "base/entries.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry electron_lifetime{"Electron lifetime", 1e-6, "s", Range::closed(1e-15, 1.0),
                                        "SRH electron lifetime tau_n in s"};
    const NumberEntry hole_lifetime{"Hole lifetime", 1e-6, "s", Range::closed(1e-15, 1.0),
                                    "SRH hole lifetime tau_p in s"};
    const NumberEntry trap_level{"Trap level", 0.0, "eV", Range::closed(-5.0, 5.0),
                                 "SRH trap energy in eV measured from midgap (positive towards the conduction "
                                 "band); it must also lie inside the gap, |value| < E_g/2"};
  } // namespace

  SrhChannel::SrhChannel(double tau_n_, double tau_p_, double n1_, double p1_, double ni2_)
    : tau_n(tau_n_), tau_p(tau_p_), n1(n1_), p1(p1_), ni2(ni2_)
  {}

  void
  SrhChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                 const Material &d) const
  {
    const std::string s = section + "/" + subsection;
    prm.enter_subsection(subsection);
    declare(prm, s, electron_lifetime, d.tau_n);
    declare(prm, s, hole_lifetime, d.tau_p);
    declare(prm, s, trap_level, d.trap_level);
    prm.leave_subsection();
  }

  void
  SrhChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section, Material &m) const
  {
    const std::string s = section + "/" + subsection;
    prm.enter_subsection(subsection);
    m.tau_n      = get(prm, s, electron_lifetime);
    m.tau_p      = get(prm, s, hole_lifetime);
    m.trap_level = get(prm, s, trap_level);
    const std::string level_text = prm.get("Trap level");
    prm.leave_subsection();
    if (!(std::abs(m.trap_level) < 0.5 * m.band_gap))
      throw InputError(s + "/Trap level", level_text,
                       "must lie inside the gap: |level| < Band gap/2 = " + default_text(0.5 * m.band_gap) +
                         " eV");
  }

  void
  SrhChannel::setup(const Material &m, const ChannelUnits &u)
  {
    tau_n = m.tau_n / u.t0;
    tau_p = m.tau_p / u.t0;
    n1    = u.n1(m.trap_level / u.kT);
    p1    = u.p1(m.trap_level / u.kT);
    ni2   = u.ni2;
  }

  Rate
  SrhChannel::rate(const double n, const double p) const
  {
    const double num = n * p - ni2;
    const double den = tau_p * (n + n1) + tau_n * (p + p1);
    Rate r;
    r.R     = num / den;
    r.dR_dn = (p * den - num * tau_p) / (den * den);
    r.dR_dp = (n * den - num * tau_n) / (den * den);
    return r;
  }

  InverseLifetimes
  SrhChannel::low_injection(double, double) const
  {
    return {1 / tau_n, 1 / tau_p};
  }
} // namespace backcomb::fem
