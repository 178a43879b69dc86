// Semiconductor material parameters of one mesh region, in interface units
// (eV, cm^-3, cm^2/Vs, s, cm^3/s, cm^6/s), as read from a case-file section
// such as "Absorber" or "Electron interlayer".
#pragma once

#include <deal.II/base/parameter_handler.h>

#include <map>
#include <string>

namespace backcomb::fem
{
  // The recombination parameters below belong to the channels of
  // fem/physics/ (srh.h, radiative.h, auger.h), which declare, check and
  // read them; they stay named members because tests and callers set them
  // directly. A channel added later keeps its numbers in `model_numbers`,
  // keyed by its entry's path below the section, so that it need not touch
  // this struct.
  struct Material
  {
    double band_gap          = 1.6;   // eV
    double electron_affinity = 3.9;   // eV
    double permittivity      = 25.0;  // relative
    double Nc                = 2e18;  // cm^-3, effective density of states
    double Nv                = 2e18;  // cm^-3
    double mu_n              = 2.0;   // cm^2/(V s)
    double mu_p              = 2.0;   // cm^2/(V s)
    double donors            = 0.0;   // cm^-3, fully ionised
    double acceptors         = 0.0;   // cm^-3, fully ionised
    double tau_n             = 1e-6;  // s, SRH electron lifetime
    double tau_p             = 1e-6;  // s, SRH hole lifetime
    double trap_level        = 0.0;   // eV above midgap
    double B_rad             = 0.0;   // cm^3/s, radiative coefficient
    double photon_recycling  = 0.0;   // probability 0..1 (local model)
    // Photon recycling as transport (fem/photon_transport.h) instead of the
    // local probability, with the film's surroundings and the treatment of
    // the absorption below the edge (fem/radiative_emission.h); and B from
    // the absorption spectrum (van Roosbroeck-Shockley) instead of the entry.
    bool   recycling_transport = false;
    double substrate_index     = 1.5;
    double top_index           = 1.0;
    double emission_cutoff_eV  = 0.0;  // 0: the band gap
    double urbach_energy_eV    = 0.0;  // 0: no absorption below the cut-off
    bool   B_from_absorption   = false;
    // One mobile ionic species (e.g. halide vacancies) with a uniform
    // compensating background of fixed opposite charge; 0: none. Ions
    // cannot cross any contact, surface or interface of the region.
    double ion_density       = 0.0;   // cm^-3, mean density
    double ion_charge        = 1.0;   // charge number z (+1: positive ions)
    double ion_diffusion     = 1e-12; // cm^2/s
    double C_n               = 0.0;   // cm^6/s, Auger (eeh)
    double C_p               = 0.0;   // cm^6/s, Auger (ehh)
    std::map<std::string, double> model_numbers; // further channels' entries

    // Declares the entries of section `section` with the given defaults,
    // those of every registered bulk recombination channel included.
    static void declare_parameters(dealii::ParameterHandler &prm,
                                   const std::string &section,
                                   const Material &defaults);
    void parse_parameters(dealii::ParameterHandler &prm,
                          const std::string &section);

    // Intrinsic density n_i = sqrt(Nc Nv) exp(-Eg / 2kT) in cm^-3
    // (Sze & Ng, Physics of Semiconductor Devices, 3rd ed. 2007, eq. 1.22).
    double intrinsic_density(double temperature) const;
  };

  // The subsection of a material section that holds the recombination
  // channels' entries (each channel in a subsection of its own).
  inline const std::string recombination_subsection = "Recombination";
  // The subsection with the mobile ions' entries.
  inline const std::string mobile_ions_subsection = "Mobile ions";

  // Thermal voltage kT/q in V.
  double thermal_voltage(double temperature);
} // namespace backcomb::fem
