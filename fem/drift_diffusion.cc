#include "fem/drift_diffusion.h"

#include "geometry/ids.h"

#include <deal.II/base/quadrature_lib.h>
#include <deal.II/dofs/dof_tools.h>
#include <deal.II/fe/fe_q.h>
#include <deal.II/fe/fe_values.h>
#include <deal.II/fe/mapping_q1.h>
#include <deal.II/lac/dynamic_sparsity_pattern.h>
#include <deal.II/lac/sparse_direct.h>
#include <deal.II/numerics/vector_tools.h>

#include <algorithm>
#include <chrono>
#include <cmath>

namespace backcomb::fem
{
  using namespace dealii;
  namespace ids = backcomb::geometry::ids;

  namespace
  {
    // Component numbers of the unknowns.
    constexpr unsigned c_psi = 0, c_phin = 1, c_phip = 2;

    ComponentMask
    mask_of(const bool psi, const bool phin, const bool phip)
    {
      return ComponentMask(std::vector<bool>{psi, phin, phip});
    }

    // Sum of the recombination channels of a region.
    Rate
    bulk_rate(const ScaledRegion &r, const double n, const double p)
    {
      Rate sum;
      for (const auto &ch : r.channels)
        {
          const Rate k = ch->rate(n, p);
          sum.R += k.R;
          sum.dR_dn += k.dR_dn;
          sum.dR_dp += k.dR_dp;
        }
      return sum;
    }
  } // namespace

  DriftDiffusionSolver::DriftDiffusionSolver(const Triangulation<2> &tria_,
                                             const DeviceModel &device_,
                                             const NumericsParameters &numerics_)
    : tria(tria_)
    , device(device_)
    , numerics(numerics_)
    , fe(FE_Q<2>(1), 3)
    , dofs(tria_)
  {
    double xmin = 1e300, xmax = -1e300;
    for (const auto &v : tria.get_vertices())
      {
        xmin = std::min(xmin, v[0]);
        xmax = std::max(xmax, v[0]);
      }
    width = xmax - xmin;
    setup_system();
    precompute_generation();
  }

  void
  DriftDiffusionSolver::setup_system()
  {
    dofs.distribute_dofs(fe);

    // The update vanishes where values are prescribed: psi at both contacts,
    // the quasi-Fermi potentials only at ohmic contacts.
    zero_constraints.clear();
    const Functions::ZeroFunction<2> zero(3);
    VectorTools::interpolate_boundary_values(
      dofs, ids::electron_contact, zero, zero_constraints,
      mask_of(true, device.electron_contact.ohmic, device.electron_contact.ohmic));
    VectorTools::interpolate_boundary_values(
      dofs, ids::hole_contact, zero, zero_constraints,
      mask_of(true, device.hole_contact.ohmic, device.hole_contact.ohmic));
    zero_constraints.close();

    DynamicSparsityPattern dsp(dofs.n_dofs());
    DoFTools::make_sparsity_pattern(dofs, dsp, zero_constraints, false);
    sparsity.copy_from(dsp);
    jacobian.reinit(sparsity);
    solution.reinit(dofs.n_dofs());
    support_points.resize(dofs.n_dofs());
    DoFTools::map_dofs_to_support_points(MappingQ1<2>(), dofs, support_points);

    for (unsigned c = 0; c < 3; ++c)
      {
        std::vector<bool> m(3, false);
        m[c] = true;
        const IndexSet h = DoFTools::extract_boundary_dofs(dofs, ComponentMask(m), {ids::hole_contact});
        const IndexSet e = DoFTools::extract_boundary_dofs(dofs, ComponentMask(m), {ids::electron_contact});
        hole_contact_dofs[c].assign(h.begin(), h.end());
        electron_contact_dofs[c].assign(e.begin(), e.end());
      }
  }

  void
  DriftDiffusionSolver::precompute_generation()
  {
    const QGauss<2> quad(numerics.quadrature);
    FEValues<2>     fv(fe, quad, update_quadrature_points);
    generation_qp.assign(tria.n_active_cells() * quad.size(), 0.0);
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const ScaledRegion &r = device.region(cell->material_id());
        if (!r.absorber || !device.generation)
          continue;
        fv.reinit(cell);
        for (unsigned q = 0; q < quad.size(); ++q)
          {
            const Point<2> &x = fv.quadrature_point(q);
            generation_qp[cell->active_cell_index() * quad.size() + q] =
              device.generation(x[0], x[1]) / device.scaling.R0;
          }
      }
  }

  void
  DriftDiffusionSolver::set_boundary_values(Vector<double> &u, const double voltage) const
  {
    auto apply = [&](const types::boundary_id id, const ScaledContact &c, const double v_contact) {
      const double phi = v_contact / device.scaling.Vt;
      const Functions::ConstantFunction<2> values(std::vector<double>{phi + c.psi_offset, phi, phi});
      std::map<types::global_dof_index, double> bv;
      VectorTools::interpolate_boundary_values(dofs, id, values, bv, mask_of(true, c.ohmic, c.ohmic));
      for (const auto &[i, v] : bv)
        u[i] = v;
    };
    apply(ids::electron_contact, device.electron_contact, 0.0);
    apply(ids::hole_contact, device.hole_contact, voltage);
  }

  void
  DriftDiffusionSolver::assemble(const Vector<double> &u,
                                 const double light,
                                 SparseMatrix<double> *matrix,
                                 Vector<double> &residual,
                                 const bool with_contacts,
                                 const bool apply_constraints) const
  {
    const QGauss<2> quad(numerics.quadrature);
    const QGauss<1> face_quad(numerics.quadrature);
    FEValues<2>     fv(fe, quad, update_values | update_gradients | update_JxW_values);
    FEFaceValues<2> ffv(fe, face_quad, update_values | update_JxW_values);

    const unsigned dpc = fe.n_dofs_per_cell();
    const unsigned nq  = quad.size();
    FullMatrix<double> A(dpc, dpc);
    Vector<double>     F(dpc);
    std::vector<types::global_dof_index> idx(dpc);
    std::vector<unsigned> comp(dpc);
    for (unsigned i = 0; i < dpc; ++i)
      comp[i] = fe.system_to_component_index(i).first;

    if (matrix)
      *matrix = 0;
    residual.reinit(dofs.n_dofs());

    for (const auto &cell : dofs.active_cell_iterators())
      {
        const ScaledRegion &r = device.region(cell->material_id());
        fv.reinit(cell);
        cell->get_dof_indices(idx);
        A = 0;
        F = 0;
        for (unsigned q = 0; q < nq; ++q)
          {
            double      v[3] = {0, 0, 0};
            Tensor<1, 2> g[3];
            for (unsigned i = 0; i < dpc; ++i)
              {
                v[comp[i]] += u[idx[i]] * fv.shape_value(i, q);
                g[comp[i]] += u[idx[i]] * fv.shape_grad(i, q);
              }
            const double n  = std::exp(v[c_psi] - v[c_phin] + r.a_n);
            const double p  = std::exp(v[c_phip] - v[c_psi] + r.a_p);
            const Rate   k  = bulk_rate(r, n, p);
            const double G  = light * generation_qp[cell->active_cell_index() * nq + q];
            const double dx = fv.JxW(q);
            // Derivatives of R with respect to (psi, phi_n, phi_p).
            const double dR[3] = {k.dR_dn * n - k.dR_dp * p, -k.dR_dn * n, k.dR_dp * p};
            const double jn_coef = r.mu_n * n, jp_coef = r.mu_p * p;
            for (unsigned i = 0; i < dpc; ++i)
              {
                const double       vi = fv.shape_value(i, q);
                const Tensor<1, 2> gi = fv.shape_grad(i, q);
                switch (comp[i])
                  {
                    case c_psi:
                      F(i) += (r.eps * (g[c_psi] * gi) - (p - n + r.doping) * vi) * dx;
                      break;
                    case c_phin:
                      F(i) += (jn_coef * (g[c_phin] * gi) - (k.R - G) * vi) * dx;
                      break;
                    case c_phip:
                      F(i) += (jp_coef * (g[c_phip] * gi) + (k.R - G) * vi) * dx;
                      break;
                  }
                if (!matrix)
                  continue;
                const double gn = g[c_phin] * gi, gp = g[c_phip] * gi;
                for (unsigned j = 0; j < dpc; ++j)
                  {
                    const double       wj = fv.shape_value(j, q);
                    const Tensor<1, 2> gj = fv.shape_grad(j, q);
                    const unsigned     cj = comp[j];
                    double             a  = 0;
                    switch (comp[i])
                      {
                        case c_psi:
                          if (cj == c_psi)
                            a = r.eps * (gj * gi) + (p + n) * wj * vi;
                          else if (cj == c_phin)
                            a = -n * wj * vi;
                          else
                            a = -p * wj * vi;
                          break;
                        case c_phin:
                          if (cj == c_psi)
                            a = jn_coef * wj * gn - dR[0] * wj * vi;
                          else if (cj == c_phin)
                            a = -jn_coef * wj * gn + jn_coef * (gj * gi) - dR[1] * wj * vi;
                          else
                            a = -dR[2] * wj * vi;
                          break;
                        case c_phip:
                          if (cj == c_psi)
                            a = -jp_coef * wj * gp + dR[0] * wj * vi;
                          else if (cj == c_phin)
                            a = dR[1] * wj * vi;
                          else
                            a = jp_coef * wj * gp + jp_coef * (gj * gi) + dR[2] * wj * vi;
                          break;
                      }
                    A(i, j) += a * dx;
                  }
              }
          }

        // Boundary terms: contact fluxes (selective model) and surface
        // recombination. On symmetry sides the normal flux is zero.
        for (const unsigned f : cell->face_indices())
          {
            if (!cell->face(f)->at_boundary())
              continue;
            const auto bid = cell->face(f)->boundary_id();
            const ScaledContact *contact = nullptr;
            const ScaledSurface *surface = nullptr;
            if (bid == ids::electron_contact)
              contact = &device.electron_contact;
            else if (bid == ids::hole_contact)
              contact = &device.hole_contact;
            else if (bid == ids::top_surface)
              surface = &device.top_surface;
            else if (bid == ids::gap_interface)
              surface = &device.gap_interface;
            if (contact && (contact->ohmic || !with_contacts))
              continue;
            if (surface && surface->S_n == 0 && surface->S_p == 0)
              continue;
            if (!contact && !surface)
              continue;
            ffv.reinit(cell, f);
            // Equilibrium densities at the contact: n, p with psi at its
            // contact value and the quasi-Fermi levels at the contact's.
            double n0 = 0, p0 = 0;
            if (contact)
              {
                n0 = std::exp(contact->psi_offset + r.a_n);
                p0 = std::exp(-contact->psi_offset + r.a_p);
              }
            const SurfaceRecombination srec =
              surface ? SurfaceRecombination(surface->S_n, surface->S_p,
                                             std::exp(r.ln_nc - r.half_gap + surface->trap_level),
                                             std::exp(r.ln_nv - r.half_gap - surface->trap_level),
                                             r.ni2)
                      : SurfaceRecombination(0, 0, 0, 0, 0);
            for (unsigned q = 0; q < face_quad.size(); ++q)
              {
                double v[3] = {0, 0, 0};
                for (unsigned i = 0; i < dpc; ++i)
                  v[comp[i]] += u[idx[i]] * ffv.shape_value(i, q);
                const double n  = std::exp(v[c_psi] - v[c_phin] + r.a_n);
                const double p  = std::exp(v[c_phip] - v[c_psi] + r.a_p);
                const double ds = ffv.JxW(q);
                // Electron and hole particle fluxes out of the absorber and
                // their derivatives with respect to (psi, phi_n, phi_p).
                double fn, fp, dfn[3], dfp[3];
                if (contact)
                  {
                    fn = contact->S_n * (n - n0);
                    fp = contact->S_p * (p - p0);
                    dfn[0] = contact->S_n * n, dfn[1] = -contact->S_n * n, dfn[2] = 0;
                    dfp[0] = -contact->S_p * p, dfp[1] = 0, dfp[2] = contact->S_p * p;
                  }
                else
                  {
                    const Rate k = srec.rate(n, p);
                    fn = fp = k.R;
                    dfn[0] = dfp[0] = k.dR_dn * n - k.dR_dp * p;
                    dfn[1] = dfp[1] = -k.dR_dn * n;
                    dfn[2] = dfp[2] = k.dR_dp * p;
                  }
                for (unsigned i = 0; i < dpc; ++i)
                  {
                    const double vi = ffv.shape_value(i, q);
                    if (comp[i] == c_psi || vi == 0)
                      continue;
                    const double sign = comp[i] == c_phin ? -1.0 : 1.0;
                    const double flux = comp[i] == c_phin ? fn : fp;
                    const double *dflux = comp[i] == c_phin ? dfn : dfp;
                    F(i) += sign * flux * vi * ds;
                    if (matrix)
                      for (unsigned j = 0; j < dpc; ++j)
                        A(i, j) += sign * dflux[comp[j]] * ffv.shape_value(j, q) * vi * ds;
                  }
              }
          }

        if (apply_constraints)
          {
            if (matrix)
              zero_constraints.distribute_local_to_global(A, F, idx, *matrix, residual);
            else
              zero_constraints.distribute_local_to_global(F, idx, residual);
          }
        else
          for (unsigned i = 0; i < dpc; ++i)
            residual[idx[i]] += F(i);
      }
  }

  NewtonReport
  DriftDiffusionSolver::newton(Vector<double> &u, const double light) const
  {
    const auto     start = std::chrono::steady_clock::now();
    NewtonReport   report;
    Vector<double> residual(dofs.n_dofs()), delta(dofs.n_dofs());
    SparseDirectUMFPACK direct;
    for (unsigned it = 0; it < numerics.max_iterations; ++it)
      {
        assemble(u, light, &jacobian, residual, true, true);
        // Row scaling: the continuity rows carry the carrier densities and
        // span many orders of magnitude; equilibrate each row by its
        // largest entry before the direct solve.
        for (unsigned i = 0; i < jacobian.m(); ++i)
          {
            double m = 0;
            for (auto e = jacobian.begin(i); e != jacobian.end(i); ++e)
              m = std::max(m, std::abs(e->value()));
            if (m > 0 && std::isfinite(m))
              {
                for (auto e = jacobian.begin(i); e != jacobian.end(i); ++e)
                  e->value() /= m;
                residual[i] /= m;
              }
          }
        direct.initialize(jacobian);
        direct.vmult(delta, residual);
        zero_constraints.distribute(delta);

        double       worst = 0;
        unsigned     where = 0;
        bool         finite = true;
        for (unsigned i = 0; i < delta.size(); ++i)
          {
            if (!std::isfinite(delta[i]))
              finite = false;
            if (std::abs(delta[i]) > worst)
              worst = std::abs(delta[i]), where = i;
          }
        report.iterations = it + 1;
        report.update_history.push_back(worst);
        if (!finite)
          break;
        // Limit each potential's change to a few kT/q (update limiting).
        for (unsigned i = 0; i < delta.size(); ++i)
          u[i] -= std::clamp(delta[i], -numerics.max_update, numerics.max_update);
        report.worst_x = support_points[where][0];
        report.worst_y = support_points[where][1];
        if (worst < numerics.tolerance)
          {
            report.converged = true;
            break;
          }
      }
    report.seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    return report;
  }

  NewtonReport
  DriftDiffusionSolver::solve_equilibrium()
  {
    // Initial guess: local charge neutrality with both quasi-Fermi levels at
    // zero, then the contact values.
    solution = 0;
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const ScaledRegion &r = device.region(cell->material_id());
        const double psi_i = 0.5 * (r.a_p - r.a_n);
        const double ni    = std::sqrt(r.ni2);
        const double psi   = psi_i + std::asinh(0.5 * r.doping / ni);
        cell->get_dof_indices(idx);
        for (unsigned i = 0; i < idx.size(); ++i)
          if (fe.system_to_component_index(i).first == c_psi)
            solution[idx[i]] = psi;
      }
    set_boundary_values(solution, 0.0);
    Vector<double> u = solution;
    const NewtonReport rep = newton(u, 0.0);
    if (rep.converged)
      {
        solution     = u;
        bias         = 0;
        light_factor = 0;
      }
    return rep;
  }

  NewtonReport
  DriftDiffusionSolver::solve(const double voltage, const double light)
  {
    Vector<double> u = solution;
    set_boundary_values(u, voltage);
    const NewtonReport rep = newton(u, light);
    if (rep.converged)
      {
        solution     = u;
        bias         = voltage;
        light_factor = light;
      }
    return rep;
  }

  void
  DriftDiffusionSolver::set_state(const Vector<double> &u, const double voltage, const double light)
  {
    solution     = u;
    bias         = voltage;
    light_factor = light;
  }

  TerminalCurrent
  DriftDiffusionSolver::terminal_current() const
  {
    // Consistent flux: the residual of the continuity equations without the
    // contact terms, summed over the contact's nodes, is minus the current
    // through the contact.
    Vector<double> r;
    assemble(solution, light_factor, nullptr, r, false, false);
    auto sum = [&](const std::vector<types::global_dof_index> &d) {
      double s = 0;
      for (const auto i : d)
        s += r[i];
      return s;
    };
    const double J0 = device.scaling.J0 / width;
    TerminalCurrent t;
    t.electron               = -sum(hole_contact_dofs[c_phin]) * J0;
    t.hole                   = -sum(hole_contact_dofs[c_phip]) * J0;
    t.electron_contact_electron = sum(electron_contact_dofs[c_phin]) * J0;
    t.electron_contact_hole     = sum(electron_contact_dofs[c_phip]) * J0;
    return t;
  }

  double
  DriftDiffusionSolver::generation_current() const
  {
    const QGauss<2> quad(numerics.quadrature);
    FEValues<2>     fv(fe, quad, update_JxW_values);
    double          total = 0;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        fv.reinit(cell);
        for (unsigned q = 0; q < quad.size(); ++q)
          total += light_factor * generation_qp[cell->active_cell_index() * quad.size() + q] * fv.JxW(q);
      }
    return total * device.scaling.J0 / width;
  }
} // namespace backcomb::fem
