#include "fem/physics/selective_contact.h"

#include "base/entries.h"
#include "fem/device.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry electron_velocity{"Electron transfer velocity", 1e7, "cm/s", Range::closed(0.0, 1e12),
                                        "Velocity S_n with which electrons pass from the film into the contact: flux S_n (n - n0), n0 the "
                                        "equilibrium density there. Large for the carrier the contact collects, small for "
                                        "the one it should block (0 = blocks electrons). Ignored when Model = ohmic"};
    const NumberEntry hole_velocity{"Hole transfer velocity", 1e7, "cm/s", Range::closed(0.0, 1e12),
                                    "Velocity S_p with which holes pass from the film into the contact: flux S_p (p - p0). "
                                    "Large for the carrier the contact collects, small for the one it should block "
                                    "(0 = blocks holes). Ignored when Model = ohmic"};
  } // namespace

  void
  SelectiveContact::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                       const ContactParameters &d) const
  {
    declare(prm, section, electron_velocity, d.S_n);
    declare(prm, section, hole_velocity, d.S_p);
  }

  void
  SelectiveContact::parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                     ContactParameters &c) const
  {
    c.S_n = get(prm, section, electron_velocity);
    c.S_p = get(prm, section, hole_velocity);
  }

  void
  SelectiveContact::setup(const ContactParameters &c, const double S0)
  {
    S_n = c.S_n / S0;
    S_p = c.S_p / S0;
  }

  ContactFlux
  SelectiveContact::flux(const double n, const double p, const double n0, const double p0) const
  {
    ContactFlux f;
    f.electrons      = S_n * (n - n0);
    f.d_electrons_dn = S_n;
    f.holes          = S_p * (p - p0);
    f.d_holes_dp     = S_p;
    return f;
  }
} // namespace backcomb::fem
