// Beer-Lambert absorption of the solar spectrum in the absorber, with the
// absorber's optical constants, cut off at the band gap, one or two passes
// (back reflectance) after the front reflectance (the functions of
// fem/optics.h, which cite their sources). Knows the incident power, hence
// the optical side of the power balance.
// Entries: Spectrum file, Optical constants file, Front reflectance, Back
// reflectance.
#pragma once

#include "fem/physics/generation_model.h"

namespace backcomb::fem
{
  class SpectrumGeneration : public GenerationModel
  {
  public:
    std::string name() const override { return "spectrum"; }
    std::string description() const override
    {
      return "'spectrum': Beer-Lambert absorption of the solar spectrum with the absorber's optical "
             "constants, cut off at the band gap.";
    }
    void declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &base_folder, bool selected,
                          IlluminationParameters &p) const override;
    GenerationProfile profile(const IlluminationParameters &p, double band_gap_eV,
                              const OpticalColumn &column) const override;
    std::optional<AboveGapSpectrum> spectral(const IlluminationParameters &p, double band_gap_eV) const override;
    std::optional<OpticalBudget> budget(const IlluminationParameters &p, double band_gap_eV,
                                        const OpticalColumn &column) const override;
  };
} // namespace backcomb::fem
