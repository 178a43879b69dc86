#include "simulator/recycling_setup.h"

#include "base/errors.h"
#include "base/format.h"

namespace backcomb::simulator
{
  namespace
  {
    const std::string radiative = "Absorber/Recombination/Radiative/";
  } // namespace

  fem::EmissionSpectrum
  absorber_emission(const Case &c)
  {
    fem::EmissionOptions o;
    o.temperature_K    = c.device.temperature;
    o.cutoff_eV        = c.absorber.emission_cutoff_eV > 0 ? c.absorber.emission_cutoff_eV : c.absorber.band_gap;
    o.urbach_energy_eV = c.absorber.urbach_energy_eV;
    const fem::OpticalConstants constants = fem::read_optical_constants(c.illumination.optical_constants_file);
    if (constants.kind == fem::OpticalConstants::Kind::alpha)
      throw InputError("Illumination/Optical constants file", c.illumination.optical_constants_file.string(),
                       "holds absorption coefficients only; the emission spectrum of " + radiative +
                         "Photon recycling = transport or Coefficient from absorption = true needs the "
                         "refractive index too (an n,k table)");
    return fem::van_roosbroeck_shockley(constants, o);
  }

  fem::FilmOptics
  absorber_film(const Case &c)
  {
    fem::FilmOptics f;
    f.thickness_um    = c.geometry.absorber_thickness_um;
    f.substrate_index = c.absorber.substrate_index;
    f.top_index       = c.absorber.top_index;
    return f;
  }

  void
  prepare_absorber_emission(Case &c)
  {
    if (!c.absorber.recycling_transport && !c.absorber.B_from_absorption)
      return;
    const fem::EmissionSpectrum emission = absorber_emission(c);
    if (c.absorber.B_from_absorption)
      c.absorber.B_rad = fem::radiative_coefficient(emission, c.absorber);
  }

  fem::RecyclingFactory
  recycling_factory(const Case &c)
  {
    if (!c.absorber.recycling_transport)
      return {};
    return fem::film_recycling(absorber_film(c), absorber_emission(c));
  }
} // namespace backcomb::simulator
