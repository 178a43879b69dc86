// Recombination channels. Each channel is a small class with its own
// parameters; the solver sums the channels of a region. All quantities are
// in one consistent unit system chosen by the caller (the solver uses its
// scaled units): densities n, p, n1, p1, ni2 = n_i^2, lifetimes, velocities.
#pragma once

#include <memory>
#include <string>

namespace backcomb::fem
{
  // Net recombination rate and its partial derivatives.
  struct Rate
  {
    double R     = 0;
    double dR_dn = 0;
    double dR_dp = 0;
  };

  class RecombinationChannel
  {
  public:
    virtual ~RecombinationChannel() = default;
    virtual std::string name() const = 0;
    virtual Rate rate(double n, double p) const = 0;
  };

  // Shockley-Read-Hall through a single trap level:
  // R = (np - n_i^2) / (tau_p (n + n1) + tau_n (p + p1))
  // (W. Shockley, W. T. Read, Phys. Rev. 87 (1952) 835; R. N. Hall,
  // Phys. Rev. 87 (1952) 387).
  class SrhRecombination : public RecombinationChannel
  {
  public:
    SrhRecombination(double tau_n, double tau_p, double n1, double p1, double ni2);
    std::string name() const override { return "srh"; }
    Rate rate(double n, double p) const override;

  private:
    double tau_n, tau_p, n1, p1, ni2;
  };

  // Band-to-band radiative recombination, net of photon recycling:
  // R = (1 - P_r) B (np - n_i^2).
  class RadiativeRecombination : public RecombinationChannel
  {
  public:
    RadiativeRecombination(double B_effective, double ni2);
    std::string name() const override { return "radiative"; }
    Rate rate(double n, double p) const override;

  private:
    double B, ni2;
  };

  // Auger recombination: R = (C_n n + C_p p)(np - n_i^2).
  class AugerRecombination : public RecombinationChannel
  {
  public:
    AugerRecombination(double C_n, double C_p, double ni2);
    std::string name() const override { return "auger"; }
    Rate rate(double n, double p) const override;

  private:
    double C_n, C_p, ni2;
  };

  // SRH recombination at a surface or interface, per unit area:
  // R_s = (np - n_i^2) / ((n + n1)/S_p + (p + p1)/S_n), written as
  // S_n S_p (np - n_i^2) / (S_n (n + n1) + S_p (p + p1)) so that a zero
  // velocity switches the surface off.
  class SurfaceRecombination : public RecombinationChannel
  {
  public:
    SurfaceRecombination(double S_n, double S_p, double n1, double p1, double ni2);
    std::string name() const override { return "surface"; }
    Rate rate(double n, double p) const override;

  private:
    double S_n, S_p, n1, p1, ni2;
  };
} // namespace backcomb::fem
