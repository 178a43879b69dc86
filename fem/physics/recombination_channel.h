// What every recombination channel provides. A bulk channel is one class in
// one file of fem/physics/, registered by name in registry.cc; it
//  - declares and parses its own case-file entries in a material's section
//    (with NumberEntry, so the documented unit and range are the checked
//    ones), storing them in the Material;
//  - says whether a material's parameters switch it on;
//  - evaluates its net rate R(n, p) and the exact derivatives dR/dn, dR/dp
//    in the unit system it was set up in (the solver's scaled units, or
//    physical units with ChannelUnits::physical);
//  - names its VTK field and its key in the power balance;
//  - reports its low-injection inverse lifetimes for the guard rails.
// A surface channel does the same per unit area for a surface section.
#pragma once

#include "fem/material.h"

#include <deal.II/base/parameter_handler.h>

#include <cmath>
#include <string>

namespace backcomb::fem
{
  struct SurfaceParameters;

  // Net recombination rate and its partial derivatives.
  struct Rate
  {
    double R     = 0;
    double dR_dn = 0;
    double dR_dp = 0;
  };

  // Inverse low-injection lifetimes of minority carriers: electrons in
  // p-type material (at majority density p0) and holes in n-type material
  // (at n0), in 1/(time unit).
  struct InverseLifetimes
  {
    double electrons = 0;
    double holes     = 0;
  };

  // The unit system a channel is evaluated in, with the band quantities of
  // its material expressed in it. Densities are in N0 (cm^-3), times in t0
  // (s), energies in kT (eV). The formulas are those the solver has always
  // used (see DESIGN.md), so scaled results are unchanged to the last bit.
  struct ChannelUnits
  {
    double N0       = 1;  // cm^-3 per density unit
    double t0       = 1;  // s per time unit
    double kT       = 0;  // eV
    double ln_nc    = 0;  // ln(Nc / N0)
    double ln_nv    = 0;  // ln(Nv / N0)
    double half_gap = 0;  // E_g / 2 in kT
    double ni2      = 0;  // n_i^2 in density units squared

    // The electron and hole densities n1 = Nc exp(-(E_c - E_t)/kT),
    // p1 = Nv exp(-(E_t - E_v)/kT) of a level E_t lying `level_kT` (in kT)
    // above midgap (Shockley and Read 1952).
    double n1(double level_kT) const { return std::exp(ln_nc - half_gap + level_kT); }
    double p1(double level_kT) const { return std::exp(ln_nv - half_gap - level_kT); }

    // The solver's scaled units (N0, t0) at thermal energy kT in eV.
    static ChannelUnits scaled(const Material &m, double kT, double N0, double t0);
    // Physical units: cm^-3, s, cm^-3 s^-1.
    static ChannelUnits physical(const Material &m, double temperature);
  };

  class RecombinationChannel
  {
  public:
    virtual ~RecombinationChannel() = default;

    // The registry name, also the channel's key in the power balance
    // (PowerBalance::bulk_recombination) and in losses.csv ("bulk_<name>").
    virtual std::string name() const = 0;
    // The VTK field holding this channel's rate in cm^-3 s^-1.
    virtual std::string field_name() const = 0;

    // Declares the channel's entries inside the material section `section`
    // (prm is already in it), with the defaults taken from `defaults`.
    virtual void declare_parameters(dealii::ParameterHandler &prm,
                                    const std::string        &section,
                                    const Material           &defaults) const = 0;
    // Reads and checks them into `m` (whose other entries are already read).
    virtual void parse_parameters(dealii::ParameterHandler &prm,
                                  const std::string        &section,
                                  Material                 &m) const = 0;

    // Whether the parameters of `m` switch the channel on.
    virtual bool active(const Material &m) const = 0;
    // Takes the channel's coefficients from `m`, converted into `units`.
    virtual void setup(const Material &m, const ChannelUnits &units) = 0;

    // Net rate (recombination minus thermal generation) and derivatives.
    virtual Rate rate(double n, double p) const = 0;

    // The channel's share of the low-injection minority-carrier lifetimes
    // at equilibrium densities n0, p0 (the guard rails sum 1/tau).
    virtual InverseLifetimes low_injection(double n0, double p0) const = 0;
  };

  // Recombination at a surface or interface, per unit area: the flux of
  // electrons and of holes into the surface. Velocities are in units of
  // S0 = N0-independent length / time (the solver's L0/t0, or cm/s).
  class SurfaceChannel
  {
  public:
    virtual ~SurfaceChannel() = default;
    virtual std::string name() const = 0;
    virtual void declare_parameters(dealii::ParameterHandler &prm,
                                    const std::string        &section,
                                    const SurfaceParameters  &defaults) const = 0;
    virtual void parse_parameters(dealii::ParameterHandler &prm,
                                  const std::string        &section,
                                  SurfaceParameters        &s) const = 0;
    virtual bool active(const SurfaceParameters &s) const = 0;
    // `units` are those of the material next to the surface; S0 is the
    // velocity unit in cm/s.
    virtual void setup(const SurfaceParameters &s, const ChannelUnits &units, double S0) = 0;
    virtual Rate rate(double n, double p) const = 0;
  };
} // namespace backcomb::fem
