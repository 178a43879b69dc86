#include "fem/physics/spectrum_generation.h"

#include "base/entries.h"

#include <algorithm>
#include <cmath>

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry front_reflectance{"Front reflectance", 0.0, "", Range::closed(0.0, 1.0),
                                        "Fraction of the light reflected before it enters the absorber "
                                        "(spectrum model only)"};
    const NumberEntry back_reflectance{"Back reflectance", 0.0, "", Range::closed(0.0, 1.0),
                                       "Fraction of the light reaching the far side of the absorber that is "
                                       "reflected back for a second pass (0 = single pass; spectrum model "
                                       "only)"};
  } // namespace

  void
  SpectrumGeneration::declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &d) const
  {
    declare_text(prm, "Illumination", "Spectrum file", "", dealii::Patterns::Anything(), "",
                 "Spectral irradiance, comma separated, wavelength in nm and irradiance "
                 "in W m^-2 nm^-1; either two columns or the four columns of the "
                 "ASTM G173-03 tables (the global-tilt column is used). Empty: the "
                 "shipped ASTM G173-03 AM1.5G spectrum. Relative paths are relative to "
                 "the case file's folder.");
    declare_text(prm, "Illumination", "Optical constants file", "", dealii::Patterns::Anything(), "",
                 "Absorber optical constants: a .yml file with a 'tabulated nk' block "
                 "(rows: wavelength in um, n, k), or a table with header "
                 "'wavelength_nm,alpha_per_cm' (alpha in cm^-1). Empty: the shipped "
                 "MAPbI3 n,k table. Relative paths are relative to the case file's "
                 "folder.");
    declare(prm, "Illumination", front_reflectance, d.front_reflectance);
    declare(prm, "Illumination", back_reflectance, d.back_reflectance);
  }

  void
  SpectrumGeneration::parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &base_folder,
                                       bool, IlluminationParameters &p) const
  {
    const IlluminationParameters defaults;
    p.spectrum_file          = case_file_path(prm, "Spectrum file", base_folder, defaults.spectrum_file);
    p.optical_constants_file = case_file_path(prm, "Optical constants file", base_folder,
                                              defaults.optical_constants_file);
    p.front_reflectance      = get(prm, "Illumination", front_reflectance);
    p.back_reflectance       = get(prm, "Illumination", back_reflectance);
  }

  namespace
  {
    BeerLambert
    passes(const IlluminationParameters &p, const OpticalColumn &column)
    {
      return {column.absorber_um, p.intensity_suns, p.front_reflectance, column.returned(p.back_reflectance),
              column.entering()};
    }
  } // namespace

  GenerationProfile
  SpectrumGeneration::profile(const IlluminationParameters &p, const double band_gap_eV,
                              const OpticalColumn &column) const
  {
    const double      suns      = p.intensity_suns;
    const auto        spectrum  = read_spectrum(p.spectrum_file);
    const auto        constants = read_optical_constants(p.optical_constants_file);
    const auto        above     = above_gap_spectrum(spectrum, constants, band_gap_eV);
    const BeerLambert optics    = passes(p, column);
    const double      thickness_um = column.absorber_um;

    GenerationProfile g;
    g.photon_current   = suns * photon_current_mA_per_cm2(above);
    g.absorbed_current = beer_lambert_absorbed_current(above, optics);

    // Linear interpolation of e^{-alpha d} on a step h errs by at most
    // (alpha h)^2 / 8 relative; alpha h <= 0.02 keeps every wavelength's
    // term, hence the sum, within 5e-5.
    const double alpha_max =
      above.alpha_per_cm.empty() ? 0. : *std::max_element(above.alpha_per_cm.begin(), above.alpha_per_cm.end());
    const double intervals = std::clamp(std::ceil(alpha_max * 1e-4 * thickness_um / 0.02), 2000., 100000.);
    const auto   n         = static_cast<std::size_t>(intervals);
    for (std::size_t j = 0; j <= n; ++j)
      {
        const double d = thickness_um * static_cast<double>(j) / n;
        g.depth_um.push_back(d);
        g.rate_per_cm3_s.push_back(beer_lambert_generation(above, optics, d));
      }
    return g;
  }

  std::optional<AboveGapSpectrum>
  SpectrumGeneration::spectral(const IlluminationParameters &p, const double band_gap_eV) const
  {
    return above_gap_spectrum(read_spectrum(p.spectrum_file), read_optical_constants(p.optical_constants_file),
                              band_gap_eV);
  }

  std::optional<OpticalBudget>
  SpectrumGeneration::budget(const IlluminationParameters &p, const double band_gap_eV,
                             const OpticalColumn &column) const
  {
    const auto spectrum  = read_spectrum(p.spectrum_file);
    const auto constants = read_optical_constants(p.optical_constants_file);
    const auto above     = above_gap_spectrum(spectrum, constants, band_gap_eV);
    return column_budget(spectrum, above, column, p.intensity_suns, p.front_reflectance, p.back_reflectance);
  }
} // namespace backcomb::fem
