#include "fem/physics/radiative.h"

#include "base/entries.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry coefficient{"Coefficient", 0.0, "cm^3/s", Range::closed(0.0, 1e-5),
                                  "Band-to-band radiative coefficient B in cm^3/s"};
    const NumberEntry recycling{"Photon recycling probability", 0.0, "", Range::closed(0.0, 1.0),
                                "Fraction of radiative events re-absorbed in the film (the net radiative "
                                "rate is (1 - P_r) B (np - n_i^2))"};
  } // namespace

  RadiativeChannel::RadiativeChannel(double B_, double ni2_)
    : B(B_), ni2(ni2_)
  {}

  void
  RadiativeChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                       const Material &d) const
  {
    prm.enter_subsection(subsection);
    declare(prm, section + "/" + subsection, coefficient, d.B_rad);
    declare(prm, section + "/" + subsection, recycling, d.photon_recycling);
    prm.leave_subsection();
  }

  void
  RadiativeChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                     Material &m) const
  {
    prm.enter_subsection(subsection);
    m.B_rad            = get(prm, section + "/" + subsection, coefficient);
    m.photon_recycling = get(prm, section + "/" + subsection, recycling);
    prm.leave_subsection();
  }

  void
  RadiativeChannel::setup(const Material &m, const ChannelUnits &u)
  {
    // A coefficient in cm^3/s times N0 t0.
    B   = (1 - m.photon_recycling) * m.B_rad * u.N0 * u.t0;
    ni2 = u.ni2;
  }

  Rate
  RadiativeChannel::rate(const double n, const double p) const
  {
    return {B * (n * p - ni2), B * p, B * n};
  }

  InverseLifetimes
  RadiativeChannel::low_injection(const double n0, const double p0) const
  {
    return {B * p0, B * n0};
  }
} // namespace backcomb::fem
