// Selective contact: each carrier leaves with the particle flux
// S (c - c0) at its own surface recombination velocity, c0 its density at
// the contact in equilibrium (a surface-recombination-velocity boundary
// condition; S = 0 blocks a carrier, S -> infinity approaches the ohmic
// contact).
// Entries: Electron transfer velocity, Hole transfer velocity.
#pragma once

#include "fem/physics/contact_model.h"

namespace backcomb::fem
{
  class SelectiveContact : public ContactModel
  {
  public:
    std::string name() const override { return "selective"; }
    std::string description() const override
    {
      return "selective: the potential is set by the work function and each carrier leaves with flux "
             "S (c - c0) at its own velocity;";
    }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const ContactParameters &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          ContactParameters &c) const override;
    void setup(const ContactParameters &c, double S0) override;
    bool pins_quasi_fermi_levels() const override { return false; }
    ContactFlux flux(double n, double p, double n0, double p0) const override;

  private:
    double S_n = 0, S_p = 0;
  };
} // namespace backcomb::fem
