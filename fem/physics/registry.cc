// The registration lines: one per model. The order is the order in which
// the models' entries are declared and in which the channels are summed
// (kept fixed so that sums, and hence results, do not change).
#include "fem/physics/registry.h"

#include "fem/physics/auger.h"
#include "fem/physics/band_tail.h"
#include "fem/physics/depth_table_generation.h"
#include "fem/physics/ohmic_contact.h"
#include "fem/physics/radiative.h"
#include "fem/physics/selective_contact.h"
#include "fem/physics/spectrum_generation.h"
#include "fem/physics/srh.h"
#include "fem/physics/surface_srh.h"
#include "fem/physics/uniform_generation.h"

namespace backcomb::fem
{
  namespace
  {
    template <typename Base, typename Model>
    std::pair<std::string, typename Registry<Base>::Factory>
    entry()
    {
      return {Model().name(), [] { return std::make_unique<Model>(); }};
    }
  } // namespace

  const Registry<RecombinationChannel> &
  bulk_recombination_channels()
  {
    static const Registry<RecombinationChannel> r("bulk recombination channel",
                                                  {
                                                    entry<RecombinationChannel, SrhChannel>(),
                                                    entry<RecombinationChannel, RadiativeChannel>(),
                                                    entry<RecombinationChannel, AugerChannel>(),
                                                    entry<RecombinationChannel, BandTailChannel>(),
                                                  });
    return r;
  }

  const Registry<SurfaceChannel> &
  surface_recombination_channels()
  {
    static const Registry<SurfaceChannel> r("surface recombination channel",
                                            {
                                              entry<SurfaceChannel, SurfaceSrhChannel>(),
                                            });
    return r;
  }

  const Registry<ContactModel> &
  contact_models()
  {
    static const Registry<ContactModel> r("contact model",
                                          {
                                            entry<ContactModel, SelectiveContact>(),
                                            entry<ContactModel, OhmicContact>(),
                                          });
    return r;
  }

  const Registry<GenerationModel> &
  generation_models()
  {
    static const Registry<GenerationModel> r("generation model",
                                             {
                                               entry<GenerationModel, SpectrumGeneration>(),
                                               entry<GenerationModel, UniformGeneration>(),
                                               entry<GenerationModel, DepthTableGeneration>(),
                                             });
    return r;
  }
} // namespace backcomb::fem
