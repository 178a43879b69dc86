// A constant generation rate throughout the absorber (verification strips,
// textbook comparisons). Entry: Uniform generation rate.
#pragma once

#include "fem/physics/generation_model.h"

namespace backcomb::fem
{
  class UniformGeneration : public GenerationModel
  {
  public:
    std::string name() const override { return "uniform"; }
    std::string description() const override
    {
      return "'uniform': the constant 'Uniform generation rate'.";
    }
    void declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &base_folder, bool selected,
                          IlluminationParameters &p) const override;
    GenerationProfile profile(const IlluminationParameters &p, double band_gap_eV,
                              const OpticalColumn &column) const override;
  };
} // namespace backcomb::fem
