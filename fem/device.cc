#include "fem/device.h"

#include "fem/constants.h"
#include "base/entries.h"

#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  void
  ContactParameters::declare_parameters(dealii::ParameterHandler &prm,
                                        const std::string &section,
                                        const ContactParameters &d)
  {
    prm.enter_subsection(section);
    prm.declare_entry("Model", d.ohmic ? "ohmic" : "selective",
                      dealii::Patterns::Selection("selective|ohmic"),
                      "selective: the potential is set by the work function and each "
                      "carrier leaves with flux S (c - c0) at its own velocity; ohmic: "
                      "both quasi-Fermi levels are pinned to the contact (infinite velocities).");
    declare_number(prm, "Work function", default_text(d.work_function),
                   "Contact work function in eV, 0..10; sets the equilibrium potential "
                   "(Schottky-Mott, no pinning) and the equilibrium densities at the contact.");
    declare_number(prm, "Electron recombination velocity", default_text(d.S_n),
                   "Electron surface velocity S_n at the contact in cm/s, >= 0 "
                   "(0 = blocks electrons). Ignored when Model = ohmic.");
    declare_number(prm, "Hole recombination velocity", default_text(d.S_p),
                   "Hole surface velocity S_p at the contact in cm/s, >= 0 "
                   "(0 = blocks holes). Ignored when Model = ohmic.");
    prm.leave_subsection();
  }

  void
  ContactParameters::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    prm.enter_subsection(section);
    ohmic         = prm.get("Model") == "ohmic";
    work_function = get_in_range(prm, section, "Work function", 0.0, 10.0);
    S_n           = get_in_range(prm, section, "Electron recombination velocity", 0.0, 1e12);
    S_p           = get_in_range(prm, section, "Hole recombination velocity", 0.0, 1e12);
    prm.leave_subsection();
  }

  void
  SurfaceParameters::declare_parameters(dealii::ParameterHandler &prm,
                                        const std::string &section,
                                        const SurfaceParameters &d)
  {
    prm.enter_subsection(section);
    declare_number(prm, "Electron recombination velocity", default_text(d.S_n),
                   "SRH surface recombination velocity S_n in cm/s, >= 0.");
    declare_number(prm, "Hole recombination velocity", default_text(d.S_p),
                   "SRH surface recombination velocity S_p in cm/s, >= 0.");
    declare_number(prm, "Trap level", default_text(d.trap_level),
                   "Surface trap energy in eV from midgap of the adjacent material, "
                   "|value| < E_g/2.");
    prm.leave_subsection();
  }

  void
  SurfaceParameters::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    prm.enter_subsection(section);
    S_n        = get_in_range(prm, section, "Electron recombination velocity", 0.0, 1e12);
    S_p        = get_in_range(prm, section, "Hole recombination velocity", 0.0, 1e12);
    trap_level = get_in_range(prm, section, "Trap level", -5.0, 5.0);
    prm.leave_subsection();
  }

  namespace
  {
    // The entries of section "Numerics"; the defaults are those of
    // NumericsParameters.
    const NumericsParameters numerics_defaults;
    const NumberEntry newton_tolerance{
      "Newton tolerance", numerics_defaults.tolerance, "kT/q", Range::closed(1e-14, 1e-2),
      "Converged when the largest Newton update is below this"};
    const NumberEntry newton_iterations{
      "Newton iterations", double(numerics_defaults.max_iterations), "",
      Range::whole_numbers(1, 1000), "Largest number of Newton steps per operating point"};
    const NumberEntry update_limit{
      "Update limit", numerics_defaults.max_update, "kT/q", Range::closed(0.1, 100),
      "Largest change of any potential per Newton step"};
    const NumberEntry step_halvings{
      "Step halvings", double(numerics_defaults.max_halvings), "", Range::whole_numbers(0, 30),
      "How often a continuation step (light or bias) may be halved before the operating "
      "point is reported as failed"};
    const NumberEntry quadrature_points{
      "Quadrature points", double(numerics_defaults.quadrature), "", Range::whole_numbers(2, 5),
      "Gauss points per cell direction"};
  } // namespace

  void
  NumericsParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection("Numerics");
    for (const NumberEntry *e :
         {&newton_tolerance, &newton_iterations, &update_limit, &step_halvings, &quadrature_points})
      declare(prm, "Numerics", *e);
    prm.leave_subsection();
  }

  void
  NumericsParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection("Numerics");
    tolerance      = get(prm, "Numerics", newton_tolerance);
    max_iterations = static_cast<unsigned>(get(prm, "Numerics", newton_iterations));
    max_update     = get(prm, "Numerics", update_limit);
    max_halvings   = static_cast<unsigned>(get(prm, "Numerics", step_halvings));
    quadrature     = static_cast<unsigned>(get(prm, "Numerics", quadrature_points));
    prm.leave_subsection();
  }

  Scaling::Scaling(const double T, const double N0_)
    : temperature(T)
    , Vt(thermal_voltage(T))
    , N0(N0_)
  {
    t0 = L0 * L0 / (mu0 * Vt);
    R0 = N0 / t0;
    S0 = L0 / t0;
    // A/cm^2 -> mA/cm^2
    J0 = constants::q * N0 * mu0 * Vt / L0 * 1e3;
    // SI: eps0 [F/m] Vt / (q N0[m^-3] L0[m]^2)
    lambda2 = constants::eps0 * Vt / (constants::q * N0 * 1e6 * (L0 * 1e-2) * (L0 * 1e-2));
  }

  DeviceModel::DeviceModel(const double temperature,
                           const std::map<unsigned, Material> &materials_,
                           const std::vector<unsigned> &absorber_ids,
                           const ContactParameters &ec,
                           const ContactParameters &hc,
                           const SurfaceParameters &top,
                           const SurfaceParameters &gap,
                           std::function<double(double, double)> generation_)
    : scaling(temperature, 1e16)
    , generation(std::move(generation_))
    , materials(materials_)
  {
    const Scaling &s = scaling;
    const double   kT = s.Vt; // eV per kT
    for (const auto &[id, m] : materials)
      {
        ScaledRegion r;
        r.absorber = false;
        for (const unsigned a : absorber_ids)
          r.absorber |= (a == id);
        r.eps      = s.lambda2 * m.permittivity;
        r.mu_n     = m.mu_n / s.mu0;
        r.mu_p     = m.mu_p / s.mu0;
        r.ln_nc    = std::log(m.Nc / s.N0);
        r.ln_nv    = std::log(m.Nv / s.N0);
        // E_c = -q psi - chi, E_v = E_c - E_g; E_Fn = -q phi_n (see DESIGN.md).
        r.a_n      = r.ln_nc + m.electron_affinity / kT;
        r.a_p      = r.ln_nv - (m.electron_affinity + m.band_gap) / kT;
        r.doping   = (m.donors - m.acceptors) / s.N0;
        r.ni2      = std::exp(r.a_n + r.a_p);
        r.half_gap = 0.5 * m.band_gap / kT;
        // n1 = Nc exp(-(E_c - E_t)/kT), E_t = midgap + trap level.
        r.n1 = std::exp(r.ln_nc - r.half_gap + m.trap_level / kT);
        r.p1 = std::exp(r.ln_nv - r.half_gap - m.trap_level / kT);
        r.channels.push_back(std::make_shared<SrhRecombination>(
          m.tau_n / s.t0, m.tau_p / s.t0, r.n1, r.p1, r.ni2));
        if (m.B_rad > 0)
          r.channels.push_back(std::make_shared<RadiativeRecombination>(
            (1 - m.photon_recycling) * m.B_rad * s.N0 * s.t0, r.ni2));
        if (m.C_n > 0 || m.C_p > 0)
          r.channels.push_back(std::make_shared<AugerRecombination>(
            m.C_n * s.N0 * s.N0 * s.t0, m.C_p * s.N0 * s.N0 * s.t0, r.ni2));
        regions[id] = r;
      }
    auto contact = [&](const ContactParameters &c) {
      return ScaledContact{c.ohmic, -c.work_function / kT, c.S_n / s.S0, c.S_p / s.S0};
    };
    electron_contact = contact(ec);
    hole_contact     = contact(hc);
    top_surface      = {top.S_n / s.S0, top.S_p / s.S0, top.trap_level / kT};
    gap_interface    = {gap.S_n / s.S0, gap.S_p / s.S0, gap.trap_level / kT};
  }

  const ScaledRegion &
  DeviceModel::region(const unsigned id) const
  {
    const auto it = regions.find(id);
    if (it == regions.end())
      throw std::runtime_error("mesh region " + std::to_string(id) + " has no material");
    return it->second;
  }
} // namespace backcomb::fem
