// Radiative emission of the absorber from its absorption spectrum: the
// van Roosbroeck-Shockley relation (W. van Roosbroeck, W. Shockley,
// "Photon-radiative recombination of electrons and holes in germanium",
// Phys. Rev. 94 (1954) 1558), the radiative coefficient B that follows
// from it, and the detailed-balance (Shockley-Queisser) limit of a step
// absorber.
//
// Units at this interface: photon energies in eV, absorption coefficients
// in cm^-1, rates in cm^-3 s^-1 (per eV for spectra), B in cm^3 s^-1,
// current densities in mA/cm^2, voltages in V, temperatures in K.
#pragma once

#include "fem/material.h"
#include "fem/optics.h"

#include <vector>

namespace backcomb::fem
{
  // How the absorption spectrum is turned into an emission spectrum.
  //
  // Below `cutoff_eV` the tabulated absorption is not used: the shipped
  // MAPbI3 table is an oscillator fit whose sub-gap "tail" stays near
  // 1.7e3 cm^-1 down to 0.83 eV, which the Boltzmann factor of the
  // emission would weight by up to exp(0.77 eV / kT) ~ 1e13 and turn into
  // nonsense. Below the cut-off the absorption is either zero
  // (`urbach_energy_eV` = 0, a hard cut-off) or an exponential (Urbach)
  // tail alpha(E) = alpha(E_cut) exp((E - E_cut) / E_U) continued from the
  // tabulated value at the cut-off.
  struct EmissionOptions
  {
    double temperature_K     = 300;
    // Set it to the absorber's band gap, or to where the table's measured
    // absorption edge ends; B depends on it (a factor ~1.7 per 20 meV for
    // the shipped MAPbI3 table, see DEVELOPERS.md "Photon recycling").
    double cutoff_eV         = 1.6;
    double urbach_energy_eV  = 0;  // 0: hard cut-off; else < kT
    // Refractive index used when the optical constants are an alpha table
    // (no n): a constant, required > 0 then; ignored for n,k tables.
    double constant_index    = 0;
    // Uniform energy grid: step and extent above the cut-off, in kT. The
    // emission falls as exp(-E/kT), so 25 kT leaves out < 2e-11 of it.
    double step_kT           = 0.125;
    double span_above_kT     = 25;
  };

  // The internal spontaneous emission at thermal equilibrium on a uniform
  // energy grid, with the optical data it was made from.
  struct EmissionSpectrum
  {
    double              temperature_K = 300;
    std::vector<double> energy_eV;     // increasing, uniform
    std::vector<double> index;         // real refractive index n(E)
    std::vector<double> alpha_per_cm;  // after the cut-off treatment
    std::vector<double> rate;          // r0(E), cm^-3 s^-1 eV^-1
    // Fraction of the emitted photons carried by each grid node (trapezoid
    // weights times r0, normalised): sums to 1. This is the spectrum that
    // the re-absorption (fem/photon_transport.h) integrates over.
    std::vector<double> photon_fraction;
    double              R0 = 0;        // int r0 dE, cm^-3 s^-1
  };

  // r0(E) = 8 pi n^2 E^2 alpha(E) / (h^3 c^2) / (exp(E/kT) - 1), per unit
  // volume, time and photon energy: the black-body photon density of a
  // medium of index n (8 pi n^3 E^2 / (h^3 c^3) per unit energy, the group
  // index taken equal to n) times the Bose-Einstein occupation, times the
  // absorption rate alpha c / n of a photon (van Roosbroeck and Shockley
  // 1954, eq. 3 in their notation; P. Wuerfel, Physics of Solar Cells,
  // Wiley 2005, sec. 3.4, from memory). Throws InputError naming the file
  // if the table does not cover the energy grid, or naming the option if an
  // option is out of range.
  EmissionSpectrum
  van_roosbroeck_shockley(const OpticalConstants &constants,
                          const EmissionOptions  &options);

  // B = R0 / n_i^2 in cm^3 s^-1, with n_i from the material's Nc, Nv and
  // band gap at the spectrum's temperature (Material::intrinsic_density):
  // the radiative rate B (n p - n_i^2) then vanishes at equilibrium and
  // equals R0 (n p / n_i^2) away from it.
  double
  radiative_coefficient(const EmissionSpectrum &emission,
                        const Material         &material);

  // The detailed-balance limit of a flat step absorber (absorptance 1 above
  // the gap, 0 below, emission through the front into a hemisphere of
  // index 1; W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510).
  struct DetailedBalanceLimit
  {
    double Jsc_mA_per_cm2 = 0; // q times the photon flux above the gap
    double J0_mA_per_cm2  = 0; // q times the black-body flux above the gap
    double Voc_V          = 0; // kT/q ln(Jsc/J0 + 1)
  };

  // Jsc from the spectrum (photon_current_mA_per_cm2, intensity 1 sun);
  // J0 = q 2 pi / (h^3 c^2) int_Eg^inf E^2 / (exp(E/kT) - 1) dE in closed
  // form by the series sum_k exp(-k x) (x^2/k + 2x/k^2 + 2/k^3), x = Eg/kT.
  DetailedBalanceLimit
  detailed_balance_limit(const Spectrum &spectrum,
                         double          band_gap_eV,
                         double          temperature_K);
} // namespace backcomb::fem
