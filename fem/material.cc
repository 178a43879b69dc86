#include "fem/material.h"

#include "fem/constants.h"
#include "fem/physics/recombination_channel.h"
#include "fem/physics/registry.h"
#include "base/entries.h"

#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  void
  Material::declare_parameters(dealii::ParameterHandler &prm,
                               const std::string &section,
                               const Material &d)
  {
    prm.enter_subsection(section);
    declare_number(prm, "Band gap", default_text(d.band_gap), "Band gap E_g in eV, > 0 and <= 10.");
    declare_number(prm, "Electron affinity", default_text(d.electron_affinity),
                   "Electron affinity chi in eV (vacuum level to conduction band edge), 0..10.");
    declare_number(prm, "Relative permittivity", default_text(d.permittivity),
                   "Static relative permittivity, >= 1.");
    declare_number(prm, "Conduction band density of states", default_text(d.Nc),
                   "Effective density of states N_c in cm^-3, > 0.");
    declare_number(prm, "Valence band density of states", default_text(d.Nv),
                   "Effective density of states N_v in cm^-3, > 0.");
    declare_number(prm, "Electron mobility", default_text(d.mu_n), "mu_n in cm^2/(V s), > 0.");
    declare_number(prm, "Hole mobility", default_text(d.mu_p), "mu_p in cm^2/(V s), > 0.");
    declare_number(prm, "Donor density", default_text(d.donors),
                   "Ionised donor density N_D in cm^-3, >= 0.");
    declare_number(prm, "Acceptor density", default_text(d.acceptors),
                   "Ionised acceptor density N_A in cm^-3, >= 0.");
    // The recombination channels' own entries.
    for (const std::string &name : bulk_recombination_channels().names())
      bulk_recombination_channels().create(name)->declare_parameters(prm, section, d);
    prm.leave_subsection();
  }

  void
  Material::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    prm.enter_subsection(section);
    band_gap          = get_in_range(prm, section, "Band gap", 1e-3, 10.0);
    electron_affinity = get_in_range(prm, section, "Electron affinity", 0.0, 10.0);
    permittivity      = get_in_range(prm, section, "Relative permittivity", 1.0, 1e4);
    Nc                = get_in_range(prm, section, "Conduction band density of states", 1e10, 1e24);
    Nv                = get_in_range(prm, section, "Valence band density of states", 1e10, 1e24);
    mu_n              = get_in_range(prm, section, "Electron mobility", 1e-8, 1e6);
    mu_p              = get_in_range(prm, section, "Hole mobility", 1e-8, 1e6);
    donors            = get_in_range(prm, section, "Donor density", 0.0, 1e23);
    acceptors         = get_in_range(prm, section, "Acceptor density", 0.0, 1e23);
    for (const std::string &name : bulk_recombination_channels().names())
      bulk_recombination_channels().create(name)->parse_parameters(prm, section, *this);
    prm.leave_subsection();
  }

  double
  thermal_voltage(const double temperature)
  {
    return constants::k_B * temperature / constants::q;
  }

  double
  Material::intrinsic_density(const double temperature) const
  {
    return std::sqrt(Nc * Nv) * std::exp(-band_gap / (2.0 * thermal_voltage(temperature)));
  }
} // namespace backcomb::fem
