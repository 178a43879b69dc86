// The physical description of one device (materials per region, contacts,
// surfaces, temperature, generation) and its conversion to the scaled units
// the solver works in. Units are converted here and nowhere else.
#pragma once

#include "fem/material.h"
#include "fem/physics/contact_model.h"
#include "fem/physics/recombination_channel.h"
#include "fem/recycling_operator.h"

#include <deal.II/base/parameter_handler.h>
#include <deal.II/base/point.h>

#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // A comb contact: the work function sets the equilibrium potential and the
  // equilibrium densities n0, p0 at the contact; how the carriers cross it
  // is decided by the contact model named `model` (fem/physics/: "selective"
  // and "ohmic"), which also declares and reads its own entries. The
  // velocities belong to the selective model; they stay named members
  // because tests and callers set them directly. A model added later keeps
  // its numbers in `model_numbers`, keyed by entry name.
  struct ContactParameters
  {
    std::string model         = "selective";
    double      work_function = 4.0;  // eV
    double      S_n           = 1e7;  // cm/s
    double      S_p           = 1e7;  // cm/s
    std::map<std::string, double> model_numbers;

    static void declare_parameters(dealii::ParameterHandler &prm,
                                   const std::string &section,
                                   const ContactParameters &defaults);
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section);
  };

  // Recombination at a surface or interface (top surface, gap interface):
  // the entries of every registered surface channel (fem/physics/; today
  // surface SRH, whose numbers are the named members below).
  struct SurfaceParameters
  {
    double S_n        = 0;   // cm/s
    double S_p        = 0;   // cm/s
    double trap_level = 0;   // eV above midgap of the adjacent material
    std::map<std::string, double> model_numbers;

    static void declare_parameters(dealii::ParameterHandler &prm,
                                   const std::string &section,
                                   const SurfaceParameters &defaults);
    void parse_parameters(dealii::ParameterHandler &prm, const std::string &section);
  };

  // Newton and continuation settings (section "Numerics").
  struct NumericsParameters
  {
    double   tolerance      = 1e-9;  // max Newton update, kT/q
    unsigned max_iterations = 60;
    double   max_update     = 4.0;   // kT/q per Newton step and unknown
    unsigned max_halvings   = 8;
    // Gauss points per direction. Two would be 30 % faster and change the
    // demo's PCE by 2e-6 only, but they misrepresent n in the first cell at
    // an ohmic contact, where n varies over decades: the collection
    // probability next to such a contact was 11 % off (3 points: 0.5 %).
    unsigned quadrature     = 3;
    // Chord steps with an earlier factorisation (see DriftDiffusionSolver).
    bool     reuse_factorisations = true;
    // Discretisation of the electron and hole currents: Galerkin in the
    // quasi-Fermi potentials, or exponentially fitted along the cell edges
    // (fem/edge_flux.h), which stays accurate where a density changes by
    // many times e across a cell and so allows coarser cells at contacts.
    enum class CarrierFlux
    {
      galerkin,
      edge_averaged
    };
    CarrierFlux carrier_flux = CarrierFlux::galerkin;

    static void declare_parameters(dealii::ParameterHandler &prm);
    void parse_parameters(dealii::ParameterHandler &prm);
  };

  // Reference quantities of the scaled system. Lengths in L0 = 1 um (the
  // mesh unit), potentials in kT/q, densities in N0, mobilities in 1 cm^2/Vs.
  struct Scaling
  {
    double temperature; // K
    double Vt;          // V
    double N0;          // cm^-3
    double L0 = 1e-4;   // cm
    double mu0 = 1.0;   // cm^2/(V s)
    double t0;          // s        = L0^2 / (mu0 Vt)
    double R0;          // cm^-3/s  = N0 / t0
    double S0;          // cm/s     = L0 / t0
    double J0;          // mA/cm^2  = q N0 mu0 Vt / L0
    double lambda2;     // eps0 Vt / (q N0 L0^2), Poisson coefficient

    Scaling(double temperature, double N0);
  };

  // One region in scaled units.
  struct ScaledRegion
  {
    bool   absorber = false;  // generation happens here
    double eps;               // lambda2 * eps_r
    double mu_n, mu_p;
    double a_n, a_p;          // n = exp(psi - phi_n + a_n), p = exp(phi_p - psi + a_p)
    double doping;            // (N_D - N_A)/N0
    double ni2;
    double half_gap;          // Eg/2 in kT
    double ln_nc, ln_nv;      // ln(Nc/N0), ln(Nv/N0)
    // Mobile ions (0: none here): mean density /N0, charge number z and
    // mobility D/(Vt mu0). The ion density is c = ion_density
    // exp(z (phi_c - psi)) with phi_c the ions' electrochemical potential,
    // the fourth unknown of the solver when any region has ions.
    double ion_density = 0, ion_z = 1, ion_mu = 0;
    // The bulk channels switched on in this region, in registry order.
    std::vector<std::shared_ptr<const RecombinationChannel>> channels;
  };

  struct ScaledContact
  {
    std::shared_ptr<const ContactModel> model; // set up in scaled units
    double psi_offset;  // psi = V_contact - W, in kT/q
  };

  // The surface channels switched on at one surface, set up for each region
  // that the surface may bound (n1, p1 and n_i are the adjacent material's).
  struct ScaledSurface
  {
    std::map<unsigned, std::vector<std::shared_ptr<const SurfaceChannel>>> channels;

    // The channels next to region `material_id`; empty if none.
    const std::vector<std::shared_ptr<const SurfaceChannel>> &next_to(unsigned material_id) const;
  };

  // The sum of the rates of `channels` (per unit area) and its derivatives.
  Rate surface_rate(const std::vector<std::shared_ptr<const SurfaceChannel>> &channels, double n, double p);

  class DeviceModel
  {
  public:
    // materials: region (material id) -> parameters; absorber_ids: regions
    // with optical generation. generation(x_um, y_um) in cm^-3 s^-1.
    DeviceModel(double temperature,
                const std::map<unsigned, Material> &materials,
                const std::vector<unsigned> &absorber_ids,
                const ContactParameters &electron_contact,
                const ContactParameters &hole_contact,
                const SurfaceParameters &top_surface,
                const SurfaceParameters &gap_interface,
                std::function<double(double, double)> generation);

    Scaling                            scaling;
    std::map<unsigned, ScaledRegion>   regions;
    ScaledContact                      electron_contact, hole_contact;
    ScaledSurface                      top_surface, gap_interface;
    std::function<double(double, double)> generation; // physical units
    // Optional fixed space charge density in cm^-3 (positive like ionised
    // donors), added to the doping; used for manufactured solutions.
    std::function<double(double, double)> fixed_charge;
    // Photon recycling as lateral transport (fem/recycling_operator.h):
    // empty for the local model, in which each region's radiative channel
    // is already net of its recycling probability. When set, the absorber's
    // radiative channel must count every emitted photon (probability 0).
    RecyclingFactory recycling;
    std::map<unsigned, Material>       materials;      // physical units

    const ScaledRegion &region(unsigned material_id) const;
    // Whether any region holds mobile ions.
    bool has_ions() const;
    // The contact or recombining surface at boundary id `boundary_id`,
    // nullptr for other boundaries (mirror sides).
    const ScaledContact *contact_at(unsigned boundary_id) const;
    const ScaledSurface *surface_at(unsigned boundary_id) const;
  };
} // namespace backcomb::fem
