#include "simulator/bounds.h"

#include "base/format.h"
#include "fem/constants.h"

#include <algorithm>
#include <cmath>
#include <cstdio>

namespace backcomb::simulator
{
  namespace
  {
    std::string
    number(const double v, const int digits = 4)
    {
      char buffer[64];
      std::snprintf(buffer, sizeof buffer, "%.*g", digits, v);
      return buffer;
    }
  } // namespace

  DetailedBalance
  detailed_balance_limit(const double photon_current, const double band_gap_eV, const double temperature_K)
  {
    namespace k = backcomb::constants;
    const double kT = k::k_B * temperature_K / k::q; // eV
    // Photon flux per unit energy of a black body into a hemisphere, per
    // eV: 2 pi / (h^3 c^2) E^2 / (exp(E/kT) - 1) with E in J, times q for
    // the eV. Simpson's rule from E_g to E_g + 40 kT (the rest is below
    // e^-40 of the integral).
    const double prefactor = 2 * M_PI / (k::h * k::h * k::h * k::c * k::c) * std::pow(k::q, 3); // m^-2 s^-1 eV^-3
    const int    n         = 4000;
    const double a = band_gap_eV, b = band_gap_eV + 40 * kT, h = (b - a) / n;
    double       sum = 0;
    for (int i = 0; i <= n; ++i)
      {
        const double E = a + i * h;
        const double f = E * E / std::expm1(E / kT);
        sum += f * (i == 0 || i == n ? 1 : (i % 2 ? 4 : 2));
      }
    const double flux = prefactor * sum * h / 3;         // m^-2 s^-1
    const double J0   = k::q * flux * 1e3 / 1e4;         // mA/cm^2
    DetailedBalance d{J0, 0, 0};
    if (!(photon_current > 0))
      return d;
    d.Voc = kT * std::log1p(photon_current / J0);
    // Maximum of V (J_sc - J_0 (exp(V/kT) - 1)) by golden-section search on
    // [0, V_oc] (the power is unimodal there).
    const auto power = [&](double V) { return V * (photon_current - J0 * std::expm1(V / kT)); };
    double     lo = 0, hi = d.Voc;
    const double g = 0.5 * (std::sqrt(5.0) - 1);
    for (int i = 0; i < 200 && hi - lo > 1e-12; ++i)
      {
        const double m1 = hi - g * (hi - lo), m2 = lo + g * (hi - lo);
        if (power(m1) < power(m2))
          lo = m1;
        else
          hi = m2;
      }
    d.Pmax = power(0.5 * (lo + hi));
    return d;
  }

  std::vector<BoundFinding>
  check_bounds(const ResultFigures &r)
  {
    std::vector<BoundFinding> out;
    const double              over = 1 + bound_tolerance;

    // (1) Absorbed photon current above the incident photon current.
    if (r.photon_current_mA_per_cm2 && r.absorbed_current_mA_per_cm2 > over * *r.photon_current_mA_per_cm2)
      out.push_back({"absorbed_photons", true,
                     "the absorbed photon current " + number(r.absorbed_current_mA_per_cm2) +
                       " mA/cm2 exceeds the incident above-gap photon current " +
                       number(*r.photon_current_mA_per_cm2) +
                       " mA/cm2 of the spectrum at this intensity: the generation (Illumination section: "
                       "generation model, rate or depth table, Intensity) is more than the light can give"});

    // (2) V_oc at or above the band gap.
    if (r.Voc && *r.Voc >= r.band_gap_eV)
      out.push_back({"voc_band_gap", true,
                     "V_oc = " + number(*r.Voc) + " V is not below E_g/q = " + number(r.band_gap_eV) +
                       " V (Absorber/Bands and permittivity/Band gap): no cell reaches that; the carrier "
                       "densities have left the range of Boltzmann statistics (see the density warning) "
                       "or the generation is far above one sun"});

    // (3) PCE above the detailed-balance limit of the band gap.
    if (r.Pmax && r.photon_current_mA_per_cm2 && r.incident_mW_per_cm2 > 0)
      {
        const DetailedBalance sq = detailed_balance_limit(*r.photon_current_mA_per_cm2, r.band_gap_eV, r.temperature_K);
        const double          limit = 100 * sq.Pmax / r.incident_mW_per_cm2;
        const double          pce   = 100 * *r.Pmax / r.incident_mW_per_cm2;
        if (*r.Pmax > over * sq.Pmax)
          out.push_back({"pce_detailed_balance", true,
                         "PCE " + number(pce) + " % exceeds the detailed-balance (Shockley-Queisser) limit " +
                           number(limit) + " % for E_g = " + number(r.band_gap_eV) +
                           " eV under this spectrum: the radiative recombination of the absorber "
                           "(Recombination/Radiative) is below what its absorption implies, or the "
                           "generation is more than the light can give"});
        const double active_pce = pce * r.active_scale;
        if (r.active_scale > 1 + 1e-12 && *r.Pmax * r.active_scale > over * sq.Pmax)
          out.push_back({"per_active_detailed_balance", false,
                         "the per-active-area PCE " + number(active_pce) +
                           " % exceeds the detailed-balance limit " + number(limit) +
                           " %: the share of the current from the active width (collection map at short "
                           "circuit) does not hold when the cell is far from linear in the light "
                           "(collection_map.relative_difference); compare designs by the footprint figures"});
      }

    // (4) Per-active-area figures far above the footprint's.
    if (r.active_scale > active_scale_limit)
      out.push_back({"active_width", false,
                     "per-active-area figures are " + number(r.active_scale, 3) +
                       " times the footprint's (the active width is less than 1/" + number(active_scale_limit, 3) +
                       " of the period, Device/Active area, and nearly all collected carriers come from it): "
                       "compare designs by the footprint figures"});
    if (r.Jsc && r.photon_current_mA_per_cm2 && r.active_scale > 1 + 1e-12 &&
        *r.Jsc * r.active_scale > over * *r.photon_current_mA_per_cm2)
      out.push_back({"per_active_photons", false,
                     "the per-active-area Jsc " + number(*r.Jsc * r.active_scale) +
                       " mA/cm2 exceeds the incident above-gap photon current " +
                       number(*r.photon_current_mA_per_cm2) +
                       " mA/cm2: the share of the current from the active width (collection map at short circuit) "
                       "does not hold when the cell is far from linear in the light "
                       "(collection_map.relative_difference)"});

    // (5) Boltzmann statistics.
    if (r.degeneracy && *r.degeneracy > 1)
      out.push_back({"boltzmann", false,
                     "a carrier density exceeds the effective density of states (" + r.degeneracy_where +
                       "): Boltzmann statistics, which the model uses, do not hold there and the results are "
                       "not reliable; lower the generation or the bias, or check the doping and N_c, N_v"});
    return out;
  }

  std::optional<BoundFinding>
  spectrum_intensity_check(const std::string &file, const double ratio)
  {
    if (!(ratio > 0) || (ratio >= 0.8 && ratio <= 1.25))
      return std::nullopt;
    // Irradiance units that a table could be in by mistake, and the factor
    // by which their numbers differ from W m^-2 nm^-1.
    const std::vector<std::pair<double, std::string>> units = {
      {1e3, "W m-2 um-1"},    {1e-1, "mW cm-2 nm-1"}, {1e-4, "W cm-2 nm-1"},
      {1e2, "uW cm-2 nm-1"},  {1e-3, "kW m-2 nm-1"},  {1e4, "W m-2 per 0.1 nm"},
      {1e-2, "W cm-2 um-1"}};
    std::string fit;
    for (const auto &[factor, unit] : units)
      if (ratio / factor > 0.7 && ratio / factor < 1.4)
        fit = "; its numbers fit the unit " + unit + " (W m-2 nm-1 expected): divide the irradiance column by " +
              format_number(factor);
    const std::string text = file + ": the spectrum integrates to " + number(1000 * ratio) +
                             " W/m2, not about 1000 W/m2 (one sun, Illumination/Intensity = 1)" + fit;
    if (ratio > 10)
      return BoundFinding{"spectrum_intensity", true,
                          text + "; a brighter light is set with Illumination/Intensity, not in the spectrum file"};
    return BoundFinding{"spectrum_intensity", false,
                        text + "; efficiencies are computed from the power integrated from this file"};
  }
} // namespace backcomb::simulator
