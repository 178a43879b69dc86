#include "fem/device.h"

#include "fem/constants.h"
#include "fem/physics/registry.h"
#include "geometry/ids.h"
#include "base/entries.h"

#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  namespace
  {
    const NumberEntry work_function_entry{
      "Work function", 4.0, "eV", Range::closed(0.0, 10.0),
      "Contact work function; sets the equilibrium potential (Schottky-Mott, no pinning) and the "
      "equilibrium densities at the contact"};
  } // namespace

  void
  ContactParameters::declare_parameters(dealii::ParameterHandler &prm,
                                        const std::string &section,
                                        const ContactParameters &d)
  {
    const auto &models = contact_models();
    // The selection lists the registered models; its documentation joins
    // their descriptions.
    std::string doc;
    for (const std::string &name : models.names())
      doc += (doc.empty() ? "" : " ") + models.create(name)->description();
    prm.enter_subsection(section);
    declare_text(prm, section, "Model", d.model, dealii::Patterns::Selection(models.selection()), "", doc);
    declare(prm, section, work_function_entry, d.work_function);
    for (const std::string &name : models.names())
      models.create(name)->declare_parameters(prm, section, d);
    prm.leave_subsection();
  }

  void
  ContactParameters::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    const auto &models = contact_models();
    prm.enter_subsection(section);
    model         = prm.get("Model");
    work_function = get(prm, section, work_function_entry);
    // Every model's entries are read and checked, also those of the models
    // not chosen, as they were declared.
    for (const std::string &name : models.names())
      models.create(name)->parse_parameters(prm, section, *this);
    prm.leave_subsection();
  }

  void
  SurfaceParameters::declare_parameters(dealii::ParameterHandler &prm,
                                        const std::string &section,
                                        const SurfaceParameters &d)
  {
    const auto &channels = surface_recombination_channels();
    prm.enter_subsection(section);
    for (const std::string &name : channels.names())
      channels.create(name)->declare_parameters(prm, section, d);
    prm.leave_subsection();
  }

  void
  SurfaceParameters::parse_parameters(dealii::ParameterHandler &prm, const std::string &section)
  {
    const auto &channels = surface_recombination_channels();
    prm.enter_subsection(section);
    for (const std::string &name : channels.names())
      channels.create(name)->parse_parameters(prm, section, *this);
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
    declare_text(prm, "Numerics", "Reuse factorisations", "true", dealii::Patterns::Bool(), "",
                 "Newton steps may solve with the factorisation of an earlier Jacobian (chord steps) "
                 "while the updates contract fast; false gives plain Newton, a fresh Jacobian every step "
                 "(slower, same converged result)");
    declare_text(prm, "Numerics", "Carrier flux", "galerkin", dealii::Patterns::Selection("galerkin|edge-averaged"),
                 "", "Discretisation of the electron and hole currents: galerkin (Galerkin finite elements in the "
                 "quasi-Fermi potentials; needs cells of about 2 nm where a density changes steeply, at contacts "
                 "and finger edges) or edge-averaged (exponentially fitted Scharfetter-Gummel fluxes along the cell "
                 "edges, edge-averaged finite elements of Xu and Zikatanov; accurate with cells of 10 to 20 nm there)");
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
    reuse_factorisations = prm.get_bool("Reuse factorisations");
    carrier_flux = prm.get("Carrier flux") == "edge-averaged" ? CarrierFlux::edge_averaged : CarrierFlux::galerkin;
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
        const ChannelUnits u = ChannelUnits::scaled(m, kT, s.N0, s.t0);
        ScaledRegion       r;
        r.absorber = false;
        for (const unsigned a : absorber_ids)
          r.absorber |= (a == id);
        r.eps      = s.lambda2 * m.permittivity;
        r.mu_n     = m.mu_n / s.mu0;
        r.mu_p     = m.mu_p / s.mu0;
        r.ln_nc    = u.ln_nc;
        r.ln_nv    = u.ln_nv;
        // E_c = -q psi - chi, E_v = E_c - E_g; E_Fn = -q phi_n (see DESIGN.md).
        r.a_n      = r.ln_nc + m.electron_affinity / kT;
        r.a_p      = r.ln_nv - (m.electron_affinity + m.band_gap) / kT;
        r.doping   = (m.donors - m.acceptors) / s.N0;
        r.ni2      = u.ni2;
        r.half_gap = u.half_gap;
        r.ion_density = m.ion_density / s.N0;
        r.ion_z       = m.ion_charge;
        r.ion_mu      = m.ion_diffusion / (s.Vt * s.mu0);
        // Every registered bulk channel that the material switches on, set
        // up in scaled units, in registry order.
        for (const std::string &name : bulk_recombination_channels().names())
          {
            std::shared_ptr<RecombinationChannel> channel = bulk_recombination_channels().create(name);
            if (!channel->active(m))
              continue;
            channel->setup(m, u);
            r.channels.push_back(channel);
          }
        regions[id] = r;
      }
    auto contact = [&](const ContactParameters &c, const std::string &section) {
      std::shared_ptr<ContactModel> model = contact_models().create(c.model, section + "/Model");
      model->setup(c, s.S0);
      return ScaledContact{model, -c.work_function / kT};
    };
    electron_contact = contact(ec, "Electron contact");
    hole_contact     = contact(hc, "Hole contact");
    auto surface = [&](const SurfaceParameters &sp) {
      ScaledSurface out;
      for (const std::string &name : surface_recombination_channels().names())
        for (const auto &[id, m] : materials)
          {
            std::shared_ptr<SurfaceChannel> channel = surface_recombination_channels().create(name);
            if (!channel->active(sp))
              continue;
            channel->setup(sp, ChannelUnits::scaled(m, kT, s.N0, s.t0), s.S0);
            out.channels[id].push_back(channel);
          }
      return out;
    };
    top_surface   = surface(top);
    gap_interface = surface(gap);
  }

  const std::vector<std::shared_ptr<const SurfaceChannel>> &
  ScaledSurface::next_to(const unsigned material_id) const
  {
    static const std::vector<std::shared_ptr<const SurfaceChannel>> none;
    const auto it = channels.find(material_id);
    return it == channels.end() ? none : it->second;
  }

  Rate
  surface_rate(const std::vector<std::shared_ptr<const SurfaceChannel>> &channels, const double n, const double p)
  {
    Rate sum;
    for (const auto &ch : channels)
      {
        const Rate k = ch->rate(n, p);
        sum.R += k.R;
        sum.dR_dn += k.dR_dn;
        sum.dR_dp += k.dR_dp;
      }
    return sum;
  }

  const ScaledContact *
  DeviceModel::contact_at(const unsigned boundary_id) const
  {
    if (boundary_id == geometry::ids::electron_contact)
      return &electron_contact;
    if (boundary_id == geometry::ids::hole_contact)
      return &hole_contact;
    return nullptr;
  }

  const ScaledSurface *
  DeviceModel::surface_at(const unsigned boundary_id) const
  {
    if (boundary_id == geometry::ids::top_surface)
      return &top_surface;
    if (boundary_id == geometry::ids::gap_interface)
      return &gap_interface;
    return nullptr;
  }

  bool
  DeviceModel::has_ions() const
  {
    for (const auto &[id, r] : regions)
      if (r.ion_density > 0)
        return true;
    return false;
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
