#include "fem/physics/radiative.h"

#include "base/entries.h"
#include "base/errors.h"
#include "base/format.h"

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry coefficient{"Coefficient", 0.0, "cm^3/s", Range::closed(0.0, 1e-5),
                                  "Band-to-band radiative coefficient B in cm^3/s"};
    const NumberEntry recycling{"Photon recycling probability", 0.0, "", Range::closed(0.0, 1.0),
                                "Fraction of radiative events re-absorbed in the film (the net radiative "
                                "rate is (1 - P_r) B (np - n_i^2))"};
    const NumberEntry substrate{"Substrate index", 1.5, "", Range::closed(1.0, 5.0),
                                "Refractive index of the medium under the film (Photon recycling = "
                                "transport)"};
    const NumberEntry top{"Top medium index", 1.0, "", Range::closed(1.0, 5.0),
                          "Refractive index of the medium over the film's free surface (Photon "
                          "recycling = transport)"};
    const NumberEntry cutoff{"Emission cut-off", 0.0, "eV", Range::closed(0.0, 5.0),
                             "Photon energy below which the tabulated absorption is not used for the "
                             "emission spectrum (0: the band gap)"};
    const NumberEntry urbach{"Urbach energy", 0.0, "eV", Range::closed(0.0, 0.025),
                             "Absorption below the cut-off: an exponential tail of this width (0: none; "
                             "at most about kT)"};
    const char *const model_doc =
      "local: the radiative rate is net of the Photon recycling probability where the photon is "
      "emitted; transport: the emitted photons travel in the film (escape cone, Fresnel losses into the "
      "substrate, total internal reflection, re-absorption with the absorber's absorption spectrum) and "
      "make pairs where they are re-absorbed, and the recycled fraction is an output";
    const char *const from_absorption_doc =
      "true: B from the absorber's optical constants by the van Roosbroeck-Shockley relation, instead of "
      "Coefficient";
  } // namespace

  RadiativeChannel::RadiativeChannel(double B_, double ni2_)
    : B(B_), ni2(ni2_)
  {}

  void
  RadiativeChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                       const Material &d) const
  {
    prm.enter_subsection(subsection);
    declare(prm, section + "/" + subsection, coefficient, d.B_rad);
    declare(prm, section + "/" + subsection, recycling, d.photon_recycling);
    declare_text(prm, section + "/" + subsection, "Photon recycling", d.recycling_transport ? "transport" : "local",
                 dealii::Patterns::Selection("local|transport"), "", model_doc);
    declare_text(prm, section + "/" + subsection, "Coefficient from absorption", d.B_from_absorption ? "true" : "false",
                 dealii::Patterns::Bool(), "", from_absorption_doc);
    declare(prm, section + "/" + subsection, substrate, d.substrate_index);
    declare(prm, section + "/" + subsection, top, d.top_index);
    declare(prm, section + "/" + subsection, cutoff, d.emission_cutoff_eV);
    declare(prm, section + "/" + subsection, urbach, d.urbach_energy_eV);
    prm.leave_subsection();
  }

  void
  RadiativeChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                     Material &m) const
  {
    prm.enter_subsection(subsection);
    m.B_rad            = get(prm, section + "/" + subsection, coefficient);
    m.photon_recycling = get(prm, section + "/" + subsection, recycling);
    m.recycling_transport = prm.get("Photon recycling") == "transport";
    m.B_from_absorption   = prm.get_bool("Coefficient from absorption");
    m.substrate_index     = get(prm, section + "/" + subsection, substrate);
    m.top_index           = get(prm, section + "/" + subsection, top);
    m.emission_cutoff_eV  = get(prm, section + "/" + subsection, cutoff);
    m.urbach_energy_eV    = get(prm, section + "/" + subsection, urbach);
    if (m.recycling_transport && m.photon_recycling > 0)
      throw InputError(section + "/" + subsection + "/" + recycling.name, format_number(m.photon_recycling),
                       "applies to Photon recycling = local only; with transport the re-absorbed fraction is "
                       "computed (set it to 0)");
    prm.leave_subsection();
  }

  void
  RadiativeChannel::setup(const Material &m, const ChannelUnits &u)
  {
    // A coefficient in cm^3/s times N0 t0.
    B   = (1 - m.photon_recycling) * m.B_rad * u.N0 * u.t0;
    ni2 = u.ni2;
  }

  Rate
  RadiativeChannel::rate(const double n, const double p) const
  {
    return {B * (n * p - ni2), B * p, B * n};
  }

  InverseLifetimes
  RadiativeChannel::low_injection(const double n0, const double p0) const
  {
    return {B * p0, B * n0};
  }
} // namespace backcomb::fem
