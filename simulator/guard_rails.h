// Numerical guard rails: checks, before the solve, that the mesh can
// resolve the two length scales the answer depends on, and warnings with
// the numbers and the case-file entry to change when it cannot.
//
//  (a) The Debye length near each contact, L_D = sqrt(eps kT / (q^2 N))
//      (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed.
//      2007, Debye length), with N the largest of the net doping and the
//      contact's equilibrium electron and hole densities in the material
//      at the contact. A first cell normal to the contact larger than L_D
//      cannot represent the space-charge layer there.
//  (b) The diffusion length in the absorber, L = sqrt(D tau) with
//      D = mu kT/q (Einstein relation) and tau the low-injection
//      minority-carrier lifetime of the bulk channels: each channel of
//      fem/physics/ reports its 1/tau at the net doping and the rates add
//      (SRH lifetime of the carrier, radiative net of photon recycling,
//      Auger, band tails; only SRH in an undoped film). Low injection, because
//      collection is judged at short circuit, where the carriers are
//      extracted. The shorter of the electron and hole lengths counts. A
//      lateral cell in the gap wider than diffusion_cell_factor * L cannot
//      represent how the collected carriers decay towards the gap centre.
//  (c) With mobile ions, the ionic Debye length L_D = sqrt(eps kT /
//      (q^2 z^2 N_ion)) against the first cell normal to the absorber's
//      contacts and interlayer interfaces, where the ions pile up.
//  (d) With a hysteresis scan, the scan against the ions' time scales:
//      the dielectric relaxation of the ion gas tau_r = L_D^2 / D and
//      the time to cross the gap tau_g = L_D W / D (W the gap, or the
//      strip). A whole scan shorter than tau_r / 100 sees the ions frozen,
//      a bias step longer than 100 tau_g sees them in their steady state:
//      the hysteresis is then at one of its limits and the scan rate
//      cannot be resolved by the time steps (ionic time scales: common
//      practice for the charging of a diffuse layer, e.g. M. Z. Bazant,
//      K. Thornton, A. Ajdari, Phys. Rev. E 70 (2004) 021506, from memory).
#pragma once

#include "simulator/case_file.h"

#include <deal.II/grid/tria.h>

#include <string>
#include <vector>

namespace backcomb::simulator
{
  // A cell spanning more than this many diffusion lengths is flagged: over
  // one cell a diffusing carrier density then falls by more than
  // exp(2) = 7.4, which the linear (Q1) interpolation cannot follow.
  constexpr double diffusion_cell_factor = 2.0;

  // Debye length in um for relative permittivity eps_r, temperature in K
  // and density N in cm^-3.
  double debye_length_um(double eps_r, double temperature, double N_per_cm3);

  // Diffusion length sqrt(mu kT/q tau) in um, mobility in cm^2/(V s),
  // lifetime in s.
  double diffusion_length_um(double mobility, double temperature, double lifetime);

  // The low-injection minority-carrier lifetimes of electrons and holes in
  // a material (s) at `temperature` (K), as described above.
  std::pair<double, double> minority_lifetimes(const fem::Material &m, double temperature = 300.0);

  // The ionic length and time scales of (d) for a case with mobile ions
  // (all 0 without): L_D, L_D^2/D and L_D W/D.
  struct IonicScales
  {
    double debye_um = 0, relaxation_s = 0, gap_s = 0;
  };
  IonicScales ionic_scales(const Case &c);

  // The figures behind the warnings.
  struct GuardRailFigures
  {
    struct Contact
    {
      std::string name;          // "Electron contact", "Hole contact"
      std::string region;        // material region at the contact
      double      density = 0;   // N used, cm^-3
      double      debye_um = 0;
      double      cell_um  = 0;  // smallest cell side normal to the contact
    };
    std::vector<Contact> contacts;
    double electron_diffusion_um = 0, hole_diffusion_um = 0;
    double gap_cell_um = 0; // largest lateral cell side of the absorber in the gap
    // Mobile ions (0 when there are none).
    double ion_debye_um = 0;
    double ion_cell_um  = 0;  // largest first cell normal to a contact or interlayer of the absorber
    double ion_relaxation_s = 0, ion_gap_s = 0;
  };

  GuardRailFigures guard_rail_figures(const Case &c, const dealii::Triangulation<2> &tria);

  // The warnings (empty when the mesh resolves both lengths), each with the
  // numbers and the entry to change.
  std::vector<std::string> guard_rail_warnings(const Case &c, const dealii::Triangulation<2> &tria);
} // namespace backcomb::simulator
