// Band-to-band radiative recombination, net of photon recycling:
//   R = (1 - P_r) B (np - n_i^2)
// (W. van Roosbroeck, W. Shockley, Phys. Rev. 94 (1954) 1558 for B; the
// recycled fraction P_r of the emitted photons is re-absorbed in the film
// and so does not count as a loss). On when B > 0.
// Entries (in <material>/Recombination/Radiative): Coefficient, Photon recycling probability.
#pragma once

#include "fem/physics/recombination_channel.h"

namespace backcomb::fem
{
  class RadiativeChannel : public RecombinationChannel
  {
  public:
    // The subsection of "<material>/Recombination" holding the entries.
    static constexpr const char *subsection = "Radiative";

    RadiativeChannel() = default;
    // B_effective = (1 - P_r) B, directly in one unit system (tests).
    RadiativeChannel(double B_effective, double ni2);

    std::string name() const override { return "radiative"; }
    std::string field_name() const override { return "R_radiative_per_cm3_s"; }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const Material &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          Material &m) const override;
    bool active(const Material &m) const override { return m.B_rad > 0; }
    void setup(const Material &m, const ChannelUnits &units) override;
    Rate rate(double n, double p) const override;
    // B p0 for electrons, B n0 for holes.
    InverseLifetimes low_injection(double n0, double p0) const override;

  private:
    double B = 0, ni2 = 0;
  };
} // namespace backcomb::fem
