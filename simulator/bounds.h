// Physical bounds as checks on the results of a solve. A drift-diffusion
// model with inconsistent input (a spectrum in the wrong unit, a generation
// rate no sunlight can give, Boltzmann statistics pushed into degeneracy)
// still converges and gives numbers; these checks say when the numbers
// cannot describe a solar cell. Each finding is either
//  - a violation: a result no cell can reach (more absorbed photons than
//    incident ones, V_oc >= E_g/q, PCE above the detailed-balance limit);
//    `solve` writes every result and ends with exit code 6, or
//  - a warning: the model is outside its assumptions, or a derived figure
//    needs care (carriers above the effective density of states,
//    per-active-area figures far above the footprint's, a spectrum whose
//    integral is far from one sun).
// Both go into summary.json "warnings" (text) and "bounds" (one object per
// finding), to standard error and into the sweep table.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace backcomb::simulator
{
  struct BoundFinding
  {
    std::string check;    // short key: "absorbed_photons", "voc_band_gap", ...
    bool        violated; // true: impossible result; false: warning
    std::string message;  // what, the numbers, what to change
  };

  // The maximum power point of an ideal cell in the radiative limit
  // (W. Shockley, H. J. Queisser, J. Appl. Phys. 32 (1961) 510): every
  // above-gap photon gives one collected pair, J_sc = `photon_current`, and
  // the only loss is black-body emission at temperature T from the front
  // into a hemisphere,
  //   J_0 = q 2 pi / (h^3 c^2) int_Eg^inf E^2 / (exp(E/kT) - 1) dE,
  //   J(V) = J_sc - J_0 (exp(qV/kT) - 1).
  struct DetailedBalance
  {
    double J0;   // mA/cm^2
    double Voc;  // V
    double Pmax; // mW/cm^2
  };
  DetailedBalance detailed_balance_limit(double photon_current_mA_per_cm2, double band_gap_eV, double temperature_K);

  // What the checks need, per footprint unless named otherwise.
  struct ResultFigures
  {
    double band_gap_eV   = 0;
    double temperature_K = 300;
    double incident_mW_per_cm2 = 0; // integrated from the spectrum used
    // Above-gap photon current of the incident light (intensity applied,
    // before reflection and shading): the most any absorber can collect.
    std::optional<double> photon_current_mA_per_cm2;
    double                absorbed_current_mA_per_cm2 = 0; // q int G dA / footprint
    std::optional<double> Jsc, Voc, Pmax;                  // light J-V metrics
    double                active_scale = 1;                // footprint width / active width
    // Largest n/N_c or p/N_v in the device and where (for the message).
    std::optional<double> degeneracy;
    std::string           degeneracy_where;
  };

  // Per-active-area figures larger than the footprint's by more than this
  // factor (an active width below a tenth of the period) get a warning:
  // they then mostly count carriers generated outside the active width.
  constexpr double active_scale_limit = 10;

  // Tolerance of the violation checks (relative): rounding of the
  // quadratures, not physics.
  constexpr double bound_tolerance = 1e-6;

  std::vector<BoundFinding> check_bounds(const ResultFigures &r);

  // The check of a spectrum file against the stated intensity: `ratio` is
  // its integral over 1000 W m^-2 (one sun). Nothing within 20 %; a warning
  // up to a factor 10 either way or below; an error (returned with
  // violated = true, to be raised as InputError before any work) above a
  // factor 10, when the file cannot be a one-sun spectrum. Each message
  // names the irradiance unit that would fit, where one does.
  std::optional<BoundFinding> spectrum_intensity_check(const std::string &file, double ratio);
} // namespace backcomb::simulator
