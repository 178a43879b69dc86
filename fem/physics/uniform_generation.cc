#include "fem/physics/uniform_generation.h"

#include "base/entries.h"
#include "fem/constants.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry uniform_rate{"Uniform generation rate", 1e21, "cm^-3 s^-1", Range::at_least(0.0),
                                   "Generation rate at 1 sun for the uniform model, in cm^-3 s^-1"};
  } // namespace

  void
  UniformGeneration::declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &d) const
  {
    declare(prm, "Illumination", uniform_rate, d.uniform_rate_per_cm3_s);
  }

  void
  UniformGeneration::parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &, bool,
                                      IlluminationParameters &p) const
  {
    p.uniform_rate_per_cm3_s = get(prm, "Illumination", uniform_rate);
  }

  GenerationProfile
  UniformGeneration::profile(const IlluminationParameters &p, double, const OpticalColumn &column) const
  {
    const double thickness_um = column.absorber_um;
    // Micrometres to centimetres, and A to mA, for q int G dd.
    const double      to_mA_per_cm2 = 1e3 * constants::q * 1e-4;
    const double      g             = p.intensity_suns * column.entering() * p.uniform_rate_per_cm3_s;
    GenerationProfile out;
    out.depth_um         = {0., thickness_um};
    out.rate_per_cm3_s   = {g, g};
    out.absorbed_current = to_mA_per_cm2 * g * thickness_um;
    return out;
  }
} // namespace backcomb::fem
