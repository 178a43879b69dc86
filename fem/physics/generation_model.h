// What every generation model provides: its own entries in the section
// "Illumination", and the generation rate at 1 sun times the intensity
// versus depth below the illuminated surface, for one unshadowed column of
// the absorber. fem::Generation (fem/optics.h) adds the fingers' shadow and
// the lateral position. A generation model is one class in one file of
// fem/physics/, registered by name in registry.cc; the name is the text of
// the entry Illumination/Generation model.
#pragma once

#include "fem/optics.h"

#include <deal.II/base/parameter_handler.h>

#include <filesystem>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // The depth profile of one unshadowed column, interpolated linearly.
  struct GenerationProfile
  {
    std::vector<double>          depth_um;       // increasing, from 0 to the thickness
    std::vector<double>          rate_per_cm3_s; // at those depths, intensity applied
    double                       absorbed_current = 0; // q int G dd, mA/cm^2
    std::optional<double>        photon_current;  // above-gap photon current, if known
    std::optional<OpticalBudget> column_budget;   // the optical side, if known
  };

  class GenerationModel
  {
  public:
    virtual ~GenerationModel() = default;
    virtual std::string name() const = 0;
    // One sentence for the documentation of the "Generation model" entry.
    virtual std::string description() const = 0;

    // Declares the model's entries inside "Illumination" (prm is in it).
    virtual void declare_parameters(dealii::ParameterHandler     &prm,
                                    const IlluminationParameters &defaults) const = 0;
    // Reads them into `p`; relative file names are resolved against
    // `base_folder`. `selected`: this is the chosen model (a model may
    // require an entry only then).
    virtual void parse_parameters(dealii::ParameterHandler    &prm,
                                  const std::filesystem::path &base_folder,
                                  bool                         selected,
                                  IlluminationParameters      &p) const = 0;

    virtual GenerationProfile profile(const IlluminationParameters &p,
                                      double                        band_gap_eV,
                                      double                        thickness_um) const = 0;
  };
} // namespace backcomb::fem
