#include "fem/recombination.h"

namespace backcomb::fem
{
  SrhRecombination::SrhRecombination(double tau_n_, double tau_p_, double n1_, double p1_, double ni2_)
    : tau_n(tau_n_), tau_p(tau_p_), n1(n1_), p1(p1_), ni2(ni2_)
  {}

  Rate
  SrhRecombination::rate(const double n, const double p) const
  {
    const double num = n * p - ni2;
    const double den = tau_p * (n + n1) + tau_n * (p + p1);
    Rate r;
    r.R     = num / den;
    r.dR_dn = (p * den - num * tau_p) / (den * den);
    r.dR_dp = (n * den - num * tau_n) / (den * den);
    return r;
  }

  RadiativeRecombination::RadiativeRecombination(double B_, double ni2_)
    : B(B_), ni2(ni2_)
  {}

  Rate
  RadiativeRecombination::rate(const double n, const double p) const
  {
    return {B * (n * p - ni2), B * p, B * n};
  }

  AugerRecombination::AugerRecombination(double C_n_, double C_p_, double ni2_)
    : C_n(C_n_), C_p(C_p_), ni2(ni2_)
  {}

  Rate
  AugerRecombination::rate(const double n, const double p) const
  {
    const double c   = C_n * n + C_p * p;
    const double num = n * p - ni2;
    return {c * num, C_n * num + c * p, C_p * num + c * n};
  }

  SurfaceRecombination::SurfaceRecombination(double S_n_, double S_p_, double n1_, double p1_, double ni2_)
    : S_n(S_n_), S_p(S_p_), n1(n1_), p1(p1_), ni2(ni2_)
  {}

  Rate
  SurfaceRecombination::rate(const double n, const double p) const
  {
    const double num = S_n * S_p * (n * p - ni2);
    const double den = S_n * (n + n1) + S_p * (p + p1);
    Rate r;
    if (den <= 0)
      return r;
    r.R     = num / den;
    r.dR_dn = (S_n * S_p * p * den - num * S_n) / (den * den);
    r.dR_dp = (S_n * S_p * n * den - num * S_p) / (den * den);
    return r;
  }
} // namespace backcomb::fem
