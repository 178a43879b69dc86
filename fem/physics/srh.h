// Shockley-Read-Hall recombination through a single trap level:
//   R = (np - n_i^2) / (tau_p (n + n1) + tau_n (p + p1))
// (W. Shockley, W. T. Read, Phys. Rev. 87 (1952) 835; R. N. Hall,
// Phys. Rev. 87 (1952) 387), with n1, p1 the densities at which the Fermi
// level sits at the trap. Always on (a lifetime of 1 s makes it negligible).
// Entries (in <material>/Recombination/SRH): Electron lifetime, Hole lifetime, Trap level.
#pragma once

#include "fem/physics/recombination_channel.h"

namespace backcomb::fem
{
  class SrhChannel : public RecombinationChannel
  {
  public:
    // The subsection of "<material>/Recombination" holding the entries.
    static constexpr const char *subsection = "SRH";

    SrhChannel() = default;
    // Directly in one unit system (tests).
    SrhChannel(double tau_n, double tau_p, double n1, double p1, double ni2);

    std::string name() const override { return "srh"; }
    std::string field_name() const override { return "R_srh_per_cm3_s"; }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const Material &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          Material &m) const override;
    bool active(const Material &) const override { return true; }
    void setup(const Material &m, const ChannelUnits &units) override;
    Rate rate(double n, double p) const override;
    // The deep-level limit: 1/tau_n for electrons, 1/tau_p for holes.
    InverseLifetimes low_injection(double n0, double p0) const override;

  private:
    double tau_n = 1, tau_p = 1, n1 = 0, p1 = 0, ni2 = 0;
  };
} // namespace backcomb::fem
