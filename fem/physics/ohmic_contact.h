// Ohmic contact: both quasi-Fermi levels are pinned to the contact's Fermi
// level, as for infinite surface recombination velocities of both carriers:
// Dirichlet values for the quasi-Fermi potentials, the usual ideal ohmic
// contact of drift-diffusion models. No entries of its own.
#pragma once

#include "fem/physics/contact_model.h"

namespace backcomb::fem
{
  class OhmicContact : public ContactModel
  {
  public:
    std::string name() const override { return "ohmic"; }
    std::string description() const override
    {
      return "ohmic: both quasi-Fermi levels are pinned to the contact (infinite velocities).";
    }
    void declare_parameters(dealii::ParameterHandler &, const std::string &,
                            const ContactParameters &) const override {}
    void parse_parameters(dealii::ParameterHandler &, const std::string &,
                          ContactParameters &) const override {}
    void setup(const ContactParameters &, double) override {}
    bool pins_quasi_fermi_levels() const override { return true; }
    // Never asked: the quasi-Fermi levels are prescribed.
    ContactFlux flux(double, double, double, double) const override { return {}; }
  };
} // namespace backcomb::fem
