#include "fem/radiative_emission.h"

#include "fem/constants.h"
#include "base/errors.h"
#include "base/format.h"

#include <cmath>
#include <string>

namespace backcomb::fem
{
  namespace
  {
    // kT in eV.
    double
    kT_eV(const double temperature_K)
    {
      return constants::k_B * temperature_K / constants::q;
    }

    // The photon wavelength in nm of an energy in eV (inverse of
    // photon_energy_eV of optics.h).
    double
    wavelength_nm(const double energy_eV)
    {
      return 1e9 * constants::h * constants::c / (constants::q * energy_eV);
    }

    void
    check_options(const EmissionOptions &o, const OpticalConstants &constants)
    {
      const auto bad = [](const std::string &option, const double value, const std::string &reason) {
        throw InputError("emission option '" + option + "'", format_number(value), reason);
      };
      if (!(o.temperature_K > 0) || !std::isfinite(o.temperature_K))
        bad("temperature_K", o.temperature_K, "must be a finite temperature > 0 K");
      if (!(o.cutoff_eV > 0) || !std::isfinite(o.cutoff_eV))
        bad("cutoff_eV", o.cutoff_eV, "must be a finite photon energy > 0 eV");
      // An Urbach tail at least kT wide would make the emission grow without
      // bound towards low energies: no finite B.
      if (!(o.urbach_energy_eV >= 0) || !(o.urbach_energy_eV < 0.9 * kT_eV(o.temperature_K)))
        bad("urbach_energy_eV", o.urbach_energy_eV, "must be >= 0 and below 0.9 kT");
      if (!(o.step_kT > 0) || !(o.step_kT <= 1))
        bad("step_kT", o.step_kT, "must be > 0 and <= 1");
      if (!(o.span_above_kT >= 5) || !(o.span_above_kT <= 200))
        bad("span_above_kT", o.span_above_kT, "must lie in 5-200");
      if (constants.kind == OpticalConstants::Kind::alpha &&
          (!(o.constant_index >= 1) || !std::isfinite(o.constant_index)))
        bad("constant_index", o.constant_index,
            "an absorption-coefficient table (" + constants.file +
              ") has no refractive index: give a constant index >= 1");
    }

    // Real refractive index at a wavelength inside the table.
    double
    refractive_index(const OpticalConstants &constants,
                     const EmissionOptions  &options,
                     const double            wavelength)
    {
      if (constants.kind == OpticalConstants::Kind::alpha)
        return options.constant_index;
      return interpolate(constants.wavelength_nm, constants.n, wavelength);
    }

    // int_x^inf y^2 / (exp(y) - 1) dy by its series; converges fast for the
    // x > 10 of any solar-cell band gap at room temperature.
    double
    bose_tail_integral(const double x)
    {
      double sum = 0;
      for (int k = 1; k <= 200; ++k)
        {
          const double term =
            std::exp(-k * x) * (x * x / k + 2 * x / (double(k) * k) + 2 / (double(k) * k * k));
          sum += term;
          if (term < 1e-17 * sum)
            break;
        }
      return sum;
    }
  } // namespace

  EmissionSpectrum
  van_roosbroeck_shockley(const OpticalConstants &constants,
                          const EmissionOptions  &options)
  {
    check_options(options, constants);
    const double kT = kT_eV(options.temperature_K);

    // The grid starts at the cut-off (hard) or far enough below it that the
    // Urbach tail's emission, falling as exp(-(E_cut - E)(1/E_U - 1/kT)),
    // is below exp(-span) of its value at the cut-off.
    double low = options.cutoff_eV;
    if (options.urbach_energy_eV > 0)
      low -= options.span_above_kT / (1 / options.urbach_energy_eV - 1 / kT);
    const double high  = options.cutoff_eV + options.span_above_kT * kT;
    const double step  = options.step_kT * kT;
    const int    nodes = 1 + int(std::ceil((high - low) / step));

    // The table must cover what is read from it: the grid above the cut-off
    // (and the cut-off itself, where the tail starts).
    const double lo_nm = wavelength_nm(low + (nodes - 1) * step), hi_nm = wavelength_nm(options.cutoff_eV);
    check_wavelength_coverage(constants, lo_nm, hi_nm);

    EmissionSpectrum s;
    s.temperature_K = options.temperature_K;
    const double alpha_cut =
      absorption_coefficient(constants, wavelength_nm(options.cutoff_eV));
    const double index_cut = refractive_index(constants, options, wavelength_nm(options.cutoff_eV));
    // Prefactor 8 pi / (h^3 c^2) in SI, times q^3 for E in eV (E^2 dE),
    // times 100 for alpha in cm^-1 (to m^-1) and 1e-6 for m^-3 to cm^-3.
    const double prefactor = 8 * M_PI / (std::pow(constants::h, 3) * constants::c * constants::c) *
                             std::pow(constants::q, 3) * 100 * 1e-6;
    for (int i = 0; i < nodes; ++i)
      {
        const double E = low + i * step;
        double       alpha, n;
        if (E >= options.cutoff_eV)
          {
            alpha = absorption_coefficient(constants, wavelength_nm(E));
            n     = refractive_index(constants, options, wavelength_nm(E));
          }
        else // Urbach tail below the cut-off (only reached if E_U > 0)
          {
            alpha = alpha_cut * std::exp((E - options.cutoff_eV) / options.urbach_energy_eV);
            n     = index_cut;
          }
        s.energy_eV.push_back(E);
        s.index.push_back(n);
        s.alpha_per_cm.push_back(alpha);
        s.rate.push_back(prefactor * n * n * E * E * alpha / std::expm1(E / kT));
      }

    // Trapezoid weights on the uniform grid.
    double total = 0;
    for (int i = 0; i < nodes; ++i)
      {
        const double w = (i == 0 || i == nodes - 1) ? step / 2 : step;
        s.photon_fraction.push_back(w * s.rate[i]);
        total += w * s.rate[i];
      }
    if (!(total > 0))
      throw InputError("optical constants " + constants.file, format_number(options.cutoff_eV) + " eV",
                       "no absorption above the emission cut-off: no radiative emission");
    for (double &f : s.photon_fraction)
      f /= total;
    s.R0 = total;
    return s;
  }

  double
  radiative_coefficient(const EmissionSpectrum &emission,
                        const Material         &material)
  {
    const double ni = material.intrinsic_density(emission.temperature_K);
    return emission.R0 / (ni * ni);
  }

  DetailedBalanceLimit
  detailed_balance_limit(const Spectrum &spectrum,
                         const double    band_gap_eV,
                         const double    temperature_K)
  {
    if (!(band_gap_eV > 0) || !(temperature_K > 0))
      throw std::invalid_argument("the band gap and the temperature must be > 0");
    // Photon flux up to the gap wavelength, the last interval cut at the gap
    // (the spectrum's grid is not refined there).
    const auto   flux   = photon_flux(spectrum);
    const auto  &w      = spectrum.wavelength_nm;
    const double w_gap  = wavelength_nm(band_gap_eV);
    double       photons = 0; // cm^-2 s^-1
    for (std::size_t i = 0; i + 1 < w.size() && w[i] < w_gap; ++i)
      {
        const double right = std::min(w[i + 1], w_gap);
        const double f_right =
          flux[i] + (flux[i + 1] - flux[i]) * (right - w[i]) / (w[i + 1] - w[i]);
        photons += 0.5 * (flux[i] + f_right) * (right - w[i]);
      }

    const double kT = kT_eV(temperature_K);
    // 2 pi / (h^3 c^2) (kT)^3 int_x^inf y^2/(e^y - 1) dy with kT in J, per
    // m^2 s, then per cm^2 s.
    const double kT_J = kT * constants::q;
    const double black_body = 2 * M_PI / (std::pow(constants::h, 3) * constants::c * constants::c) *
                              std::pow(kT_J, 3) * bose_tail_integral(band_gap_eV / kT) * 1e-4;

    DetailedBalanceLimit limit;
    limit.Jsc_mA_per_cm2 = 1e3 * constants::q * photons;
    limit.J0_mA_per_cm2  = 1e3 * constants::q * black_body;
    limit.Voc_V          = kT * std::log1p(limit.Jsc_mA_per_cm2 / limit.J0_mA_per_cm2);
    return limit;
  }
} // namespace backcomb::fem
