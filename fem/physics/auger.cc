#include "fem/physics/auger.h"

#include "base/entries.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry electron_coefficient{"Electron-electron-hole coefficient", 0.0, "cm^6/s",
                                           Range::closed(0.0, 1e-20), "Auger coefficient C_n of the process in which two electrons and a hole meet and the energy goes to the "
                                           "second electron"};
    const NumberEntry hole_coefficient{"Electron-hole-hole coefficient", 0.0, "cm^6/s", Range::closed(0.0, 1e-20),
                                       "Auger coefficient C_p of the process in which an electron and two holes meet and the energy goes "
                                       "to the second hole"};
  } // namespace

  AugerChannel::AugerChannel(double C_n_, double C_p_, double ni2_)
    : C_n(C_n_), C_p(C_p_), ni2(ni2_)
  {}

  void
  AugerChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                   const Material &d) const
  {
    prm.enter_subsection(subsection);
    declare(prm, section + "/" + subsection, electron_coefficient, d.C_n);
    declare(prm, section + "/" + subsection, hole_coefficient, d.C_p);
    prm.leave_subsection();
  }

  void
  AugerChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section, Material &m) const
  {
    prm.enter_subsection(subsection);
    m.C_n = get(prm, section + "/" + subsection, electron_coefficient);
    m.C_p = get(prm, section + "/" + subsection, hole_coefficient);
    prm.leave_subsection();
  }

  void
  AugerChannel::setup(const Material &m, const ChannelUnits &u)
  {
    // A coefficient in cm^6/s times N0^2 t0.
    C_n = m.C_n * u.N0 * u.N0 * u.t0;
    C_p = m.C_p * u.N0 * u.N0 * u.t0;
    ni2 = u.ni2;
  }

  Rate
  AugerChannel::rate(const double n, const double p) const
  {
    const double c   = C_n * n + C_p * p;
    const double num = n * p - ni2;
    return {c * num, C_n * num + c * p, C_p * num + c * n};
  }

  InverseLifetimes
  AugerChannel::low_injection(const double n0, const double p0) const
  {
    return {C_p * p0 * p0, C_n * n0 * n0};
  }
} // namespace backcomb::fem
