// What every contact model provides. The contact's potential is always
// pinned (psi = V_contact - W/q, Schottky-Mott); what a model decides is
// how the carriers cross: either the quasi-Fermi potentials are Dirichlet
// values at the contact (pins_quasi_fermi_levels()), or each carrier
// leaves with a particle flux that the model computes (a Robin term in the
// continuity equations). A contact model is one class in one file of
// fem/physics/, registered by name in registry.cc; the name is the text of
// the contact section's "Model" entry.
#pragma once

#include <deal.II/base/parameter_handler.h>

#include <string>

namespace backcomb::fem
{
  struct ContactParameters;

  // Particle fluxes of electrons and holes out of the semiconductor into
  // the contact, per unit area, and their derivatives.
  struct ContactFlux
  {
    double electrons = 0, d_electrons_dn = 0, d_electrons_dp = 0;
    double holes = 0, d_holes_dn = 0, d_holes_dp = 0;
  };

  class ContactModel
  {
  public:
    virtual ~ContactModel() = default;
    virtual std::string name() const = 0;
    // One sentence for the documentation of the "Model" entry.
    virtual std::string description() const = 0;

    // Declares the model's own entries in the contact section `section`
    // (prm is already in it). Every model's entries are declared in every
    // contact section, so a case file may keep them when it switches model.
    virtual void declare_parameters(dealii::ParameterHandler &prm,
                                    const std::string        &section,
                                    const ContactParameters  &defaults) const = 0;
    virtual void parse_parameters(dealii::ParameterHandler &prm,
                                  const std::string        &section,
                                  ContactParameters        &c) const = 0;

    // Takes the model's coefficients from `c`; velocities are converted
    // with the velocity unit S0 in cm/s.
    virtual void setup(const ContactParameters &c, double S0) = 0;

    // True: the quasi-Fermi potentials equal the contact's potential
    // (Dirichlet), and flux() is not used.
    virtual bool pins_quasi_fermi_levels() const = 0;

    // The fluxes at densities n, p, with n0, p0 the densities there in
    // equilibrium (potential at its contact value, flat quasi-Fermi levels).
    virtual ContactFlux flux(double n, double p, double n0, double p0) const = 0;
  };
} // namespace backcomb::fem
