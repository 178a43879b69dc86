// Generation read from a table of G(depth) at 1 sun (fem::read_depth_table
// describes the format), interpolated linearly; the table must span the
// whole absorber. Entry: Depth table file (required when selected).
#pragma once

#include "fem/physics/generation_model.h"

namespace backcomb::fem
{
  class DepthTableGeneration : public GenerationModel
  {
  public:
    std::string name() const override { return "depth table"; }
    std::string description() const override
    {
      return "'depth table': G(depth) read from 'Depth table file'.";
    }
    void declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &base_folder, bool selected,
                          IlluminationParameters &p) const override;
    GenerationProfile profile(const IlluminationParameters &p, double band_gap_eV,
                              const OpticalColumn &column) const override;
  };
} // namespace backcomb::fem
