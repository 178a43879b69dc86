#include "fem/material.h"

#include "fem/constants.h"
#include "fem/physics/recombination_channel.h"
#include "fem/physics/registry.h"
#include "base/entries.h"

#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  namespace
  {
    // A material's own entries, grouped by concern into subsections of the
    // material section; the recombination channels add theirs under
    // "Recombination" (fem/physics).
    const std::string bands     = "Bands and permittivity";
    const std::string transport = "Transport";
    const std::string doping    = "Doping";

    const NumberEntry band_gap_entry{"Band gap", 1.6, "eV", Range::closed(1e-3, 10.0), "Band gap E_g"};
    const NumberEntry affinity_entry{"Electron affinity", 3.9, "eV", Range::closed(0.0, 10.0),
                               "Electron affinity chi (vacuum level to conduction band edge)"};
    const NumberEntry permittivity_entry{"Relative permittivity", 25, "", Range::closed(1.0, 1e4),
                                   "Static relative permittivity"};
    const NumberEntry Nc_entry{"Conduction band density of states", 2e18, "cm^-3", Range::closed(1e10, 1e24),
                         "Effective density of states N_c of the conduction band"};
    const NumberEntry Nv_entry{"Valence band density of states", 2e18, "cm^-3", Range::closed(1e10, 1e24),
                         "Effective density of states N_v of the valence band"};
    const NumberEntry mu_n_entry{"Electron mobility", 2, "cm^2/(V s)", Range::closed(1e-8, 1e6), "Electron mobility mu_n"};
    const NumberEntry mu_p_entry{"Hole mobility", 2, "cm^2/(V s)", Range::closed(1e-8, 1e6), "Hole mobility mu_p"};
    const NumberEntry donors_entry{"Donor density", 0, "cm^-3", Range::closed(0.0, 1e23),
                             "Ionised donor density N_D (complete ionisation)"};
    const NumberEntry acceptors_entry{"Acceptor density", 0, "cm^-3", Range::closed(0.0, 1e23),
                                "Ionised acceptor density N_A (complete ionisation)"};
    // Orders of magnitude for halide-perovskite films (common practice, no
    // single source): 1e17-1e19 cm^-3, D around 1e-12 cm^2/s at room
    // temperature. The default is no ions.
    const NumberEntry ion_density_entry{"Density", 0, "cm^-3", Range::closed(0.0, 1e21),
                                        "Mean density of the mobile ionic species, compensated by a uniform fixed "
                                        "background of opposite charge (0: no mobile ions)"};
    const NumberEntry ion_charge_entry{"Charge number", 1, "", Range::whole_numbers(-2, 2),
                                       "Charge of one ion in elementary charges (+1 for a positive vacancy, -1 for a "
                                       "negative one; not 0)"};
    const NumberEntry ion_diffusion_entry{"Diffusion coefficient", 1e-12, "cm^2/s", Range::closed(1e-20, 1e-2),
                                          "Ionic diffusion coefficient D (mobility D q/kT, Einstein relation)"};
  } // namespace

  void
  Material::declare_parameters(dealii::ParameterHandler &prm,
                               const std::string &section,
                               const Material &d)
  {
    prm.enter_subsection(section);
    prm.enter_subsection(bands);
    declare(prm, section + "/" + bands, band_gap_entry, d.band_gap);
    declare(prm, section + "/" + bands, affinity_entry, d.electron_affinity);
    declare(prm, section + "/" + bands, Nc_entry, d.Nc);
    declare(prm, section + "/" + bands, Nv_entry, d.Nv);
    declare(prm, section + "/" + bands, permittivity_entry, d.permittivity);
    prm.leave_subsection();
    prm.enter_subsection(transport);
    declare(prm, section + "/" + transport, mu_n_entry, d.mu_n);
    declare(prm, section + "/" + transport, mu_p_entry, d.mu_p);
    prm.leave_subsection();
    prm.enter_subsection(doping);
    declare(prm, section + "/" + doping, donors_entry, d.donors);
    declare(prm, section + "/" + doping, acceptors_entry, d.acceptors);
    prm.leave_subsection();
    prm.enter_subsection(recombination_subsection);
    for (const std::string &name : bulk_recombination_channels().names())
      bulk_recombination_channels().create(name)->declare_parameters(prm, section + "/" + recombination_subsection, d);
    prm.leave_subsection();
    prm.enter_subsection(mobile_ions_subsection);
    declare(prm, section + "/" + mobile_ions_subsection, ion_density_entry, d.ion_density);
    declare(prm, section + "/" + mobile_ions_subsection, ion_charge_entry, d.ion_charge);
    declare(prm, section + "/" + mobile_ions_subsection, ion_diffusion_entry, d.ion_diffusion);
    prm.leave_subsection();
    prm.leave_subsection();
  }

  void
  Material::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    prm.enter_subsection(section);
    prm.enter_subsection(bands);
    band_gap          = get(prm, section + "/" + bands, band_gap_entry);
    electron_affinity = get(prm, section + "/" + bands, affinity_entry);
    Nc                = get(prm, section + "/" + bands, Nc_entry);
    Nv                = get(prm, section + "/" + bands, Nv_entry);
    permittivity      = get(prm, section + "/" + bands, permittivity_entry);
    prm.leave_subsection();
    prm.enter_subsection(transport);
    mu_n = get(prm, section + "/" + transport, mu_n_entry);
    mu_p = get(prm, section + "/" + transport, mu_p_entry);
    prm.leave_subsection();
    prm.enter_subsection(doping);
    donors    = get(prm, section + "/" + doping, donors_entry);
    acceptors = get(prm, section + "/" + doping, acceptors_entry);
    prm.leave_subsection();
    prm.enter_subsection(recombination_subsection);
    for (const std::string &name : bulk_recombination_channels().names())
      bulk_recombination_channels().create(name)->parse_parameters(prm, section + "/" + recombination_subsection,
                                                                   *this);
    prm.leave_subsection();
    prm.enter_subsection(mobile_ions_subsection);
    const std::string ions = section + "/" + mobile_ions_subsection;
    ion_density   = get(prm, ions, ion_density_entry);
    ion_charge    = get(prm, ions, ion_charge_entry);
    ion_diffusion = get(prm, ions, ion_diffusion_entry);
    if (ion_charge == 0)
      {
        const std::string v = prm.get(ion_charge_entry.name);
        prm.leave_subsection();
        prm.leave_subsection();
        throw InputError(ions + "/" + ion_charge_entry.name, v, "must not be 0 (a mobile ion carries charge)");
      }
    prm.leave_subsection();
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
