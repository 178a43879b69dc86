// SRH recombination at a surface or interface, per unit area, through a
// single trap level (the single-level rate of W. Shockley, W. T. Read,
// Phys. Rev. 87 (1952) 835, per unit area, with the capture velocities
// S_n, S_p in place of the inverse lifetimes times a length):
//   U_s = (np - n_i^2) / ((n + n1)/S_p + (p + p1)/S_n),
// written as S_n S_p (np - n_i^2) / (S_n (n + n1) + S_p (p + p1)) so that a
// zero velocity switches the surface off. n, p, n1, p1 and n_i are those of
// the material next to the surface. On when S_n > 0 or S_p > 0.
// Entries (in a surface section): Electron recombination velocity, Hole
// recombination velocity, Trap level.
#pragma once

#include "fem/physics/recombination_channel.h"

namespace backcomb::fem
{
  class SurfaceSrhChannel : public SurfaceChannel
  {
  public:
    SurfaceSrhChannel() = default;
    // Directly in one unit system (tests).
    SurfaceSrhChannel(double S_n, double S_p, double n1, double p1, double ni2);

    std::string name() const override { return "srh"; }
    void declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                            const SurfaceParameters &defaults) const override;
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                          SurfaceParameters &s) const override;
    bool active(const SurfaceParameters &s) const override;
    void setup(const SurfaceParameters &s, const ChannelUnits &units, double S0) override;
    Rate rate(double n, double p) const override;

  private:
    double S_n = 0, S_p = 0, n1 = 0, p1 = 0, ni2 = 0;
  };
} // namespace backcomb::fem
