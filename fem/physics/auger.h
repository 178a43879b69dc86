// Auger recombination: R = (C_n n + C_p p)(np - n_i^2), C_n for the
// electron-electron-hole and C_p for the electron-hole-hole process
// (S. M. Sze, K. K. Ng, Physics of Semiconductor Devices, 3rd ed. 2007,
// section 1.5.4). On when C_n > 0 or C_p > 0.
// Entries (in <material>/Recombination/Auger), named by the process: Electron-electron-hole
// coefficient C_n (two electrons and a hole meet; the energy goes to the second electron),
// Electron-hole-hole coefficient C_p.
#pragma once

#include "fem/physics/recombination_channel.h"

namespace backcomb::fem
{
  class AugerChannel : public RecombinationChannel
  {
  public:
    // The subsection of "<material>/Recombination" holding the entries.
    static constexpr const char *subsection = "Auger";

    AugerChannel() = default;
    // Directly in one unit system (tests).
    AugerChannel(double C_n, double C_p, double ni2);

    std::string name() const override { return "auger"; }
    std::string field_name() const override { return "R_auger_per_cm3_s"; }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const Material &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          Material &m) const override;
    bool active(const Material &m) const override { return m.C_n > 0 || m.C_p > 0; }
    void setup(const Material &m, const ChannelUnits &units) override;
    Rate rate(double n, double p) const override;
    // C_p p0^2 for electrons in p-type, C_n n0^2 for holes in n-type.
    InverseLifetimes low_injection(double n0, double p0) const override;

  private:
    double C_n = 0, C_p = 0, ni2 = 0;
  };
} // namespace backcomb::fem
