#include "simulator/guard_rails.h"

#include "fem/constants.h"
#include "fem/physics/recombination_channel.h"
#include "fem/physics/registry.h"
#include "geometry/ids.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <limits>

namespace backcomb::simulator
{
  namespace ids = backcomb::geometry::ids;

  namespace
  {
    const fem::Material &
    material_of(const Case &c, const dealii::types::material_id id)
    {
      if (id == ids::electron_interlayer)
        return c.electron_interlayer;
      if (id == ids::hole_interlayer)
        return c.hole_interlayer;
      return c.absorber; // absorber and absorber_right
    }

    std::string
    region_text(const dealii::types::material_id id)
    {
      std::string s = ids::region_name(id);
      std::replace(s.begin(), s.end(), '_', ' ');
      return s;
    }

    std::string
    format(const char *f, double a, double b = 0, double c = 0, double d = 0)
    {
      char buffer[512];
      std::snprintf(buffer, sizeof buffer, f, a, b, c, d);
      return buffer;
    }
  } // namespace

  double
  debye_length_um(const double eps_r, const double temperature, const double N_per_cm3)
  {
    // SI: eps_r eps0 [F/m] (kT/q) [V] / (q [C] N [m^-3]) is in m^2.
    const double Vt = constants::k_B * temperature / constants::q;
    return 1e6 * std::sqrt(eps_r * constants::eps0 * Vt / (constants::q * N_per_cm3 * 1e6));
  }

  double
  diffusion_length_um(const double mobility, const double temperature, const double lifetime)
  {
    const double D = mobility * constants::k_B * temperature / constants::q; // cm^2/s
    return 1e4 * std::sqrt(D * lifetime);
  }

  std::pair<double, double>
  minority_lifetimes(const fem::Material &m, const double temperature)
  {
    // Majority densities at low injection: the net doping of the kind
    // present (zero in an undoped film, where only SRH remains).
    const double p0 = std::max(m.acceptors - m.donors, 0.0), n0 = std::max(m.donors - m.acceptors, 0.0);
    // Each bulk channel the material switches on, set up in physical units,
    // adds its 1/tau (SRH 1/tau_n, radiative B p0, Auger C_p p0^2 and so
    // on for electrons in p-type material; holes alike), in registry order.
    const fem::ChannelUnits units = fem::ChannelUnits::physical(m, temperature);
    double                  rate_n = 0, rate_p = 0;
    for (const std::string &name : fem::bulk_recombination_channels().names())
      {
        const auto channel = fem::bulk_recombination_channels().create(name);
        if (!channel->active(m))
          continue;
        channel->setup(m, units);
        const fem::InverseLifetimes l = channel->low_injection(n0, p0);
        rate_n += l.electrons;
        rate_p += l.holes;
      }
    return {1 / rate_n, 1 / rate_p};
  }

  IonicScales
  ionic_scales(const Case &c)
  {
    const fem::Material &a = c.absorber;
    IonicScales          s;
    if (!(a.ion_density > 0))
      return s;
    const bool   strip = c.geometry.layout == geometry::GeometryParameters::Layout::test_strip;
    const double D     = a.ion_diffusion * 1e8; // um^2/s
    const double W     = strip ? c.geometry.strip_length_um : c.geometry.gap_um;
    s.debye_um         = debye_length_um(a.permittivity, c.device.temperature, a.ion_charge * a.ion_charge * a.ion_density);
    s.relaxation_s     = s.debye_um * s.debye_um / D;
    s.gap_s            = s.debye_um * W / D;
    return s;
  }

  GuardRailFigures
  guard_rail_figures(const Case &c, const dealii::Triangulation<2> &tria)
  {
    GuardRailFigures f;
    const double     T  = c.device.temperature;
    const double     kT = constants::k_B * T / constants::q; // eV
    const double     inf = std::numeric_limits<double>::infinity();
    for (const auto b : {ids::electron_contact, ids::hole_contact})
      {
        const bool                    electron = b == ids::electron_contact;
        const fem::ContactParameters &contact  = electron ? c.electron_contact : c.hole_contact;
        GuardRailFigures::Contact     r;
        r.name    = electron ? "Electron contact" : "Hole contact";
        r.cell_um = inf;
        for (const auto &cell : tria.active_cell_iterators())
          for (unsigned fi = 0; fi < cell->n_faces(); ++fi)
            if (cell->face(fi)->at_boundary() && cell->face(fi)->boundary_id() == b)
              {
                const fem::Material &m = material_of(c, cell->material_id());
                // Equilibrium densities at the contact (Schottky-Mott):
                // n0 = Nc exp(-(W - chi)/kT), p0 = Nv exp(-(chi + Eg - W)/kT).
                const double n0 = m.Nc * std::exp(-(contact.work_function - m.electron_affinity) / kT);
                const double p0 =
                  m.Nv * std::exp(-(m.electron_affinity + m.band_gap - contact.work_function) / kT);
                const double N = std::max({std::abs(m.donors - m.acceptors), n0, p0});
                const double L = debye_length_um(m.permittivity, T, N);
                // The face is a side of an axis-parallel quadrilateral: the
                // cell's extent normal to it is along the other axis.
                const auto   v0 = cell->face(fi)->vertex(0), v1 = cell->face(fi)->vertex(1);
                const bool   horizontal = std::abs(v1[1] - v0[1]) < std::abs(v1[0] - v0[0]);
                const auto   box        = cell->bounding_box();
                const double h = horizontal ? box.side_length(1) : box.side_length(0);
                r.cell_um      = std::min(r.cell_um, h);
                // The shortest Debye length along the contact counts.
                if (r.debye_um == 0 || L < r.debye_um)
                  {
                    r.debye_um = L;
                    r.density  = N;
                    r.region   = region_text(cell->material_id());
                  }
              }
        if (r.debye_um > 0)
          f.contacts.push_back(r);
      }

    const auto [tau_n, tau_p] = minority_lifetimes(c.absorber, c.device.temperature);
    f.electron_diffusion_um   = diffusion_length_um(c.absorber.mu_n, T, tau_n);
    f.hole_diffusion_um       = diffusion_length_um(c.absorber.mu_p, T, tau_p);
    // The gap: between the finger edges of a comb period; a test strip
    // has no fingers, so the whole strip counts.
    const bool   strip = c.geometry.layout == geometry::GeometryParameters::Layout::test_strip;
    const double x0    = strip ? -inf : 0.5 * c.geometry.electron_finger_width_um;
    const double x1    = strip ? inf : x0 + c.geometry.gap_um;
    for (const auto &cell : tria.active_cell_iterators())
      if (cell->material_id() == ids::absorber || cell->material_id() == ids::absorber_right)
        {
          const auto box = cell->bounding_box();
          const double xc = 0.5 * (box.lower_bound(0) + box.upper_bound(0));
          if (xc > x0 && xc < x1)
            f.gap_cell_um = std::max(f.gap_cell_um, box.side_length(0));
        }

    if (const IonicScales ions = ionic_scales(c); ions.debye_um > 0)
      {
        f.ion_debye_um     = ions.debye_um;
        f.ion_relaxation_s = ions.relaxation_s;
        f.ion_gap_s        = ions.gap_s;
        for (const auto &cell : tria.active_cell_iterators())
          {
            if (cell->material_id() != ids::absorber && cell->material_id() != ids::absorber_right)
              continue;
            for (unsigned fi = 0; fi < cell->n_faces(); ++fi)
              {
                const auto face     = cell->face(fi);
                const bool contact  = face->at_boundary() && (face->boundary_id() == ids::electron_contact ||
                                                             face->boundary_id() == ids::hole_contact);
                const bool interlayer = !face->at_boundary() &&
                                        (cell->neighbor(fi)->material_id() == ids::electron_interlayer ||
                                         cell->neighbor(fi)->material_id() == ids::hole_interlayer);
                if (!contact && !interlayer)
                  continue;
                const auto v0 = face->vertex(0), v1 = face->vertex(1);
                const bool horizontal = std::abs(v1[1] - v0[1]) < std::abs(v1[0] - v0[0]);
                const auto box        = cell->bounding_box();
                f.ion_cell_um = std::max(f.ion_cell_um, horizontal ? box.side_length(1) : box.side_length(0));
              }
          }
      }
    return f;
  }

  std::vector<std::string>
  guard_rail_warnings(const Case &c, const dealii::Triangulation<2> &tria)
  {
    const GuardRailFigures   f = guard_rail_figures(c, tria);
    std::vector<std::string> w;
    for (const auto &k : f.contacts)
      if (k.debye_um < k.cell_um)
        w.push_back(k.name + ": the Debye length " + format("%.3g nm", 1e3 * k.debye_um) +
                    " (N = " + format("%.3g", k.density) + " cm^-3 in the " + k.region +
                    ", the largest of the net doping and the contact's equilibrium densities) is "
                    "smaller than the smallest cell normal to the contact, " +
                    format("%.3g nm", 1e3 * k.cell_um) +
                    ": the space-charge layer there is not resolved; set Mesh/Smallest cell to " +
                    format("%.2g nm", 1e3 * k.debye_um) + " or less");
    const double L        = std::min(f.electron_diffusion_um, f.hole_diffusion_um);
    const bool   electron = f.electron_diffusion_um <= f.hole_diffusion_um;
    if (f.gap_cell_um > diffusion_cell_factor * L)
      w.push_back(std::string("Absorber: the ") + (electron ? "electron" : "hole") + " diffusion length " +
                  format("%.3g um", L) + " (sqrt(D tau), D = mu kT/q, tau the low-injection minority-carrier "
                                         "lifetime, " +
                  format("%.3g s", electron ? minority_lifetimes(c.absorber, c.device.temperature).first
                                            : minority_lifetimes(c.absorber, c.device.temperature).second) +
                  ") is more than " + format("%g", diffusion_cell_factor) +
                  " times shorter than the lateral cell in the gap, " + format("%.3g um", f.gap_cell_um) +
                  ": collection in the gap is not resolved; set Mesh/Largest lateral cell to " +
                  format("%.2g um", diffusion_cell_factor * L) + " or less");
    if (f.ion_debye_um > 0 && f.ion_cell_um > f.ion_debye_um)
      w.push_back("Absorber/Mobile ions: the ionic Debye length " + format("%.3g nm", 1e3 * f.ion_debye_um) +
                  " (N = " + format("%.3g cm^-3", c.absorber.ion_density) +
                  ") is smaller than the largest first cell normal to a contact or interlayer of the absorber, " +
                  format("%.3g nm", 1e3 * f.ion_cell_um) +
                  ": the ion layers there are not resolved; set Mesh/Smallest cell to " +
                  format("%.2g nm", 1e3 * f.ion_debye_um) + " or less");
    const auto &h = c.hysteresis;
    if (h.rate > 0 && f.ion_relaxation_s > 0)
      {
        const double scan = (c.jv.stop - c.jv.start) / h.rate, per_step = c.jv.step / h.rate;
        if (scan < 0.01 * f.ion_relaxation_s)
          w.push_back("Hysteresis scan/Scan rate: the whole scan (" + format("%.3g s", scan) +
                      ") is shorter than 1/100 of the ions' relaxation time L_D^2/D = " +
                      format("%.3g s", f.ion_relaxation_s) +
                      ": the ions stay frozen where preconditioning left them, and a faster scan gives the same "
                      "curves; scan more slowly to see the rate dependence");
        if (per_step > 100 * f.ion_gap_s)
          w.push_back("Hysteresis scan/Scan rate: one bias step (" + format("%.3g s", per_step) +
                      ") is longer than 100 times the time the ions need to cross the gap, L_D W/D = " +
                      format("%.3g s", f.ion_gap_s) +
                      ": the ions are in their steady state at every bias, and a slower scan gives the same "
                      "curves; scan faster to see the rate dependence");
      }
    return w;
  }
} // namespace backcomb::simulator
