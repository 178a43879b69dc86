#include "fem/physics/recombination_channel.h"

namespace backcomb::fem
{
  ChannelUnits
  ChannelUnits::scaled(const Material &m, const double kT, const double N0, const double t0)
  {
    ChannelUnits u;
    u.N0       = N0;
    u.t0       = t0;
    u.kT       = kT;
    u.ln_nc    = std::log(m.Nc / N0);
    u.ln_nv    = std::log(m.Nv / N0);
    u.half_gap = 0.5 * m.band_gap / kT;
    // E_c = -q psi - chi, E_v = E_c - E_g (DESIGN.md): n_i^2 = exp(a_n + a_p)
    // with a_n = ln(Nc/N0) + chi/kT and a_p = ln(Nv/N0) - (chi + E_g)/kT,
    // written exactly as the solver's exponents.
    const double a_n = u.ln_nc + m.electron_affinity / kT;
    const double a_p = u.ln_nv - (m.electron_affinity + m.band_gap) / kT;
    u.ni2            = std::exp(a_n + a_p);
    return u;
  }

  ChannelUnits
  ChannelUnits::physical(const Material &m, const double temperature)
  {
    return scaled(m, thermal_voltage(temperature), 1.0, 1.0);
  }
} // namespace backcomb::fem
