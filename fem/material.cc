#include "fem/material.h"

#include "fem/constants.h"
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
    declare_number(prm, "Electron lifetime", default_text(d.tau_n),
                   "SRH electron lifetime tau_n in s, > 0.");
    declare_number(prm, "Hole lifetime", default_text(d.tau_p), "SRH hole lifetime tau_p in s, > 0.");
    declare_number(prm, "Trap level", default_text(d.trap_level),
                   "SRH trap energy in eV measured from midgap (positive towards the "
                   "conduction band), |value| < E_g/2.");
    declare_number(prm, "Radiative coefficient", default_text(d.B_rad),
                   "Band-to-band radiative coefficient B in cm^3/s, >= 0.");
    declare_number(prm, "Photon recycling probability", default_text(d.photon_recycling),
                   "Fraction of radiative events re-absorbed in the film, 0..1 "
                   "(the net radiative rate is (1 - P_r) B (np - n_i^2)).");
    declare_number(prm, "Auger electron coefficient", default_text(d.C_n),
                   "Auger coefficient C_n (n n p process) in cm^6/s, >= 0.");
    declare_number(prm, "Auger hole coefficient", default_text(d.C_p),
                   "Auger coefficient C_p (n p p process) in cm^6/s, >= 0.");
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
    tau_n             = get_in_range(prm, section, "Electron lifetime", 1e-15, 1.0);
    tau_p             = get_in_range(prm, section, "Hole lifetime", 1e-15, 1.0);
    trap_level        = get_in_range(prm, section, "Trap level", -5.0, 5.0);
    B_rad             = get_in_range(prm, section, "Radiative coefficient", 0.0, 1e-5);
    photon_recycling  = get_in_range(prm, section, "Photon recycling probability", 0.0, 1.0);
    C_n               = get_in_range(prm, section, "Auger electron coefficient", 0.0, 1e-20);
    C_p               = get_in_range(prm, section, "Auger hole coefficient", 0.0, 1e-20);
    if (!(std::abs(trap_level) < 0.5 * band_gap))
      throw InputError(section + "/Trap level", prm.get("Trap level"),
                       "must lie inside the gap: |level| < Band gap/2 = " +
                         default_text(0.5 * band_gap) + " eV");
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
