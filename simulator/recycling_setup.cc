#include "simulator/recycling_setup.h"

#include "base/errors.h"
#include "base/format.h"

#include <memory>

namespace backcomb::simulator
{
  namespace
  {
    // The solver's columns carry emission and generation per unit
    // footprint (cm^-2 s^-1); the transport operator takes thickness
    // averages (cm^-3 s^-1) on bins that start at 0.
    class FilmTransport : public fem::RecyclingOperator
    {
    public:
      FilmTransport(const fem::FilmOptics &film, const fem::EmissionSpectrum &emission,
                    std::vector<double> edges)
        : thickness_cm(film.thickness_um * 1e-4)
        , transport(film, emission, shifted(std::move(edges)))
      {}

      std::vector<double>
      reabsorbed(const std::vector<double> &emission, fem::PhotonBalance *balance) const override
      {
        std::vector<double> e(emission);
        for (double &v : e)
          v /= thickness_cm;
        fem::PhotonBalance  b;
        std::vector<double> g = transport.apply(e, b);
        for (double &v : g)
          v *= thickness_cm;
        if (balance)
          *balance = b;
        return g;
      }

      double
      local_share() const override
      {
        return transport.slab_fates().absorbed;
      }

    private:
      static std::vector<double>
      shifted(std::vector<double> edges)
      {
        const double x0 = edges.front();
        for (double &x : edges)
          x -= x0;
        return edges;
      }

      double               thickness_cm;
      fem::PhotonTransport transport;
    };

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
  apply_coefficient_from_absorption(Case &c)
  {
    if (c.absorber.B_from_absorption)
      c.absorber.B_rad = fem::radiative_coefficient(absorber_emission(c), c.absorber);
  }

  fem::RecyclingFactory
  recycling_factory(const Case &c)
  {
    if (!c.absorber.recycling_transport)
      return {};
    const fem::FilmOptics       film     = absorber_film(c);
    const fem::EmissionSpectrum emission = absorber_emission(c);
    return [film, emission](const std::vector<double> &edges) {
      return std::make_unique<FilmTransport>(film, emission, edges);
    };
  }
} // namespace backcomb::simulator
