// What every generation model provides: its own entries in the section
// "Illumination", and the generation rate at 1 sun times the intensity
// versus depth below the illuminated surface of the absorber, for one
// column of the period (gap or finger, fem::OpticalColumn: the fingers'
// shadow and the interlayers included). fem::Generation (fem/optics.h)
// picks the column by lateral position. A generation model is one class in one file of
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
                                      const OpticalColumn          &column) const = 0;

    // The above-gap spectrum with the absorber's absorption coefficient,
    // for spectral responses; only a model that knows the spectrum.
    virtual std::optional<AboveGapSpectrum> spectral(const IlluminationParameters &, double) const
    {
      return std::nullopt;
    }

    // The optical side of the power balance for one column; only a model
    // that knows the incident spectrum can tell it.
    virtual std::optional<OpticalBudget> budget(const IlluminationParameters &, double,
                                                const OpticalColumn &) const
    {
      return std::nullopt;
    }
  };
} // namespace backcomb::fem
