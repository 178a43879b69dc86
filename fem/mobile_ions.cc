// Mobile ions in the drift-diffusion solver: their density at the
// quadrature points, their number, and the implicit time steps of a
// transient of all three species, ions, electrons and holes (the assembly
// of their equations is in drift_diffusion.cc).
//
// Discrete conservation: the ion rows are tested with the Q1 functions of
// the ion region, which sum to 1 there, and the flux term of each cell sums
// to 0 over them; so the sum of the rows says that the quadrature of
// dc/dt over the region vanishes. The ion number measured with the same
// quadrature (ion_number()) is therefore kept by every step up to the
// Newton tolerance, and the BDF2 history preserves it too (its
// coefficients sum to the leading one).
#include "fem/drift_diffusion.h"

#include <deal.II/base/mpi.h>

#include <array>
#include <cmath>
#include <stdexcept>

namespace backcomb::fem
{
  using namespace dealii;

  namespace
  {
    constexpr unsigned c_psi = 0, c_phin = 1, c_phip = 2, c_ion = 3;

    // Component `c` of u at the nq quadrature points of one cell, from its
    // dpc DoF indices, their components and vertices, and the shape values
    // phi[q][vertex] (the solver's cell cache).
    void
    at_points(const Vector<double> &u, const types::global_dof_index *idx, const unsigned *component,
              const unsigned *vertex, const unsigned dpc, const double (*phi)[4], const unsigned nq, const unsigned c,
              double *out)
    {
      double nodal[4] = {};
      for (unsigned i = 0; i < dpc; ++i)
        if (component[i] == c)
          nodal[vertex[i]] = u[idx[i]];
      for (unsigned q = 0; q < nq; ++q)
        out[q] = nodal[0] * phi[q][0] + nodal[1] * phi[q][1] + nodal[2] * phi[q][2] + nodal[3] * phi[q][3];
    }
  } // namespace

  std::vector<double>
  DriftDiffusionSolver::ion_density_qp(const Vector<double> &u) const
  {
    const unsigned nq  = cell_quadrature.size();
    const unsigned dpc = fe.n_dofs_per_cell();
    std::vector<double> c(tria.n_active_cells() * nq, 0.0);
    if (!has_ions())
      return c;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const ScaledRegion &r = device.region(cell->material_id());
        if (!cell->is_locally_owned() || r.ion_density <= 0)
          continue;
        const std::size_t              ci  = cell->active_cell_index();
        const types::global_dof_index *idx = &cell_cache.dofs[ci * dpc];
        double                         psi[64], phic[64];
        at_points(u, idx, cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq, c_psi, psi);
        at_points(u, idx, cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq, c_ion, phic);
        for (unsigned q = 0; q < nq; ++q)
          c[ci * nq + q] = r.ion_density * std::exp(r.ion_z * (phic[q] - psi[q]));
      }
    return c;
  }

  void
  DriftDiffusionSolver::carrier_density_qp(const Vector<double> &u, std::vector<double> &n,
                                           std::vector<double> &p) const
  {
    const unsigned nq  = cell_quadrature.size();
    const unsigned dpc = fe.n_dofs_per_cell();
    n.assign(tria.n_active_cells() * nq, 0.0);
    p.assign(n.size(), 0.0);
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        const ScaledRegion            &r   = device.region(cell->material_id());
        const std::size_t              ci  = cell->active_cell_index();
        const types::global_dof_index *idx = &cell_cache.dofs[ci * dpc];
        double                         psi[64], phin[64], phip[64];
        at_points(u, idx, cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq, c_psi, psi);
        at_points(u, idx, cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq, c_phin, phin);
        at_points(u, idx, cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq, c_phip, phip);
        for (unsigned q = 0; q < nq; ++q)
          {
            n[ci * nq + q] = std::exp(psi[q] - phin[q] + r.a_n);
            p[ci * nq + q] = std::exp(phip[q] - psi[q] + r.a_p);
          }
      }
  }

  std::array<double, 2>
  DriftDiffusionSolver::contact_field_flux(const Vector<double> &u) const
  {
    Vector<double> r;
    assemble_residual(u, light_factor, r);
    return contact_sums(r, c_psi);
  }

  double
  DriftDiffusionSolver::ion_number(const Vector<double> &u) const
  {
    const std::vector<double> c  = ion_density_qp(u);
    double                    sum = 0;
    for (std::size_t k = 0; k < c.size(); ++k)
      sum += c[k] * cell_cache.jxw[k];
    return Utilities::MPI::sum(sum, comm) * device.scaling.N0;
  }

  double
  DriftDiffusionSolver::mean_ion_density() const
  {
    if (!has_ions())
      return 0;
    const unsigned nq   = cell_quadrature.size();
    double         area = 0;
    for (const auto &cell : dofs.active_cell_iterators())
      if (cell->is_locally_owned() && device.region(cell->material_id()).ion_density > 0)
        for (unsigned q = 0; q < nq; ++q)
          area += cell_cache.jxw[cell->active_cell_index() * nq + q];
    return ion_number(solution) / Utilities::MPI::sum(area, comm);
  }

  void
  DriftDiffusionSolver::uniform_ion_potential(Vector<double> &u, const double number) const
  {
    // phi_c uniform with int N exp(z (phi_c - psi)) = number:
    // z phi_c = ln(number) - ln(int N exp(-z psi)), the second by
    // log-sum-exp (psi spans hundreds of kT/q between regions).
    if (!has_ions())
      return;
    const unsigned nq  = cell_quadrature.size();
    const unsigned dpc = fe.n_dofs_per_cell();
    double         z   = 1, top = -1e300;
    for (const auto &[id, r] : device.regions)
      if (r.ion_density > 0)
        z = r.ion_z; // one ion region (the absorber)
    std::vector<std::pair<double, double>> terms; // (-z psi + ln N, JxW)
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const ScaledRegion &r = device.region(cell->material_id());
        if (!cell->is_locally_owned() || r.ion_density <= 0)
          continue;
        const std::size_t ci = cell->active_cell_index();
        double            psi[64];
        at_points(u, &cell_cache.dofs[ci * dpc], cell_cache.component, cell_cache.vertex, dpc, cell_cache.phi, nq,
                  c_psi, psi);
        for (unsigned q = 0; q < nq; ++q)
          {
            terms.emplace_back(-z * psi[q] + std::log(r.ion_density * device.scaling.N0),
                               cell_cache.jxw[ci * nq + q]);
            top = std::max(top, terms.back().first);
          }
      }
    top = Utilities::MPI::max(top, comm);
    double sum = 0;
    for (const auto &[e, w] : terms)
      sum += std::exp(e - top) * w;
    sum = Utilities::MPI::sum(sum, comm);
    const double phic = (std::log(number) - top - std::log(sum)) / z;
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (device.region(cell->material_id()).ion_density <= 0)
          continue;
        cell->get_dof_indices(idx);
        for (unsigned i = 0; i < idx.size(); ++i)
          if (fe.system_to_component_index(i).first == c_ion)
            u[idx[i]] = phic;
      }
  }

  void
  DriftDiffusionSolver::begin_transient()
  {
    if (!has_ions())
      throw std::logic_error("a transient needs mobile ions");
    transient      = true;
    ion_step       = 0;
    history        = TransientHistory();
    frozen_ions_qp = ion_density_qp(solution);
    factors_valid  = false; // the steady mode's matrix is condensed differently
  }

  void
  DriftDiffusionSolver::end_transient()
  {
    if (!transient)
      return;
    transient     = false;
    ion_step      = 0;
    history       = TransientHistory();
    factors_valid = false;
    // A start for the steady state with the same number of ions.
    uniform_ion_potential(solution, ion_number(solution));
  }

  NewtonReport
  DriftDiffusionSolver::solve_instantaneous(const double voltage, const double light)
  {
    ion_beta       = 1;
    ion_step       = 0;
    ion_history_qp = frozen_ions_qp;
    const NewtonReport rep = recycling ? solve_with_recycling(voltage, light, 0)
                                       : solve_fixed_generation(voltage, light, 0);
    // A jump: the next time step starts afresh (BDF1).
    if (rep.converged)
      history = TransientHistory();
    return rep;
  }

  NewtonReport
  DriftDiffusionSolver::solve_time_step(const double voltage, const double light, const double dt,
                                        const Vector<double> *guess)
  {
    if (!transient)
      throw std::logic_error("solve_time_step outside a transient");
    if (!(dt > 0) || !std::isfinite(dt))
      throw std::invalid_argument("time step must be positive and finite");
    // Variable-step BDF2 (Hairer & Wanner, Sec. III.5): with w = dt/dt_prev,
    //   (1+2w)/(1+w) c^{n+1} - (1+w) c^n + w^2/(1+w) c^{n-1} = dt dc/dt;
    // BDF1 (implicit Euler) for the first step. The history coefficients
    // sum to the leading one, so a uniform c is a solution and the ion
    // number is kept. The same for n, p and the electric flux into the
    // contacts (the displacement current).
    ion_step = 0; // no storage terms while the history is formed
    std::vector<double> cn = ion_density_qp(solution), nn, pn;
    ion_history_qp         = cn; // read by the ion rows of contact_field_flux()'s assembly
    carrier_density_qp(solution, nn, pn);
    std::array<double, 2> flux = contact_field_flux(solution);
    if (history.previous_dt <= 0)
      ion_beta = 1;
    else
      {
        const double w  = dt / history.previous_dt;
        const double h0 = 1 + w, h1 = w * w / (1 + w);
        ion_beta        = (1 + 2 * w) / (1 + w);
        std::vector<double> nm1, pm1;
        const std::vector<double> cm1 = ion_density_qp(history.previous);
        carrier_density_qp(history.previous, nm1, pm1);
        const std::array<double, 2> flux_m1 = contact_field_flux(history.previous);
        for (std::size_t k = 0; k < cn.size(); ++k)
          {
            cn[k] = h0 * cn[k] - h1 * cm1[k];
            nn[k] = h0 * nn[k] - h1 * nm1[k];
            pn[k] = h0 * pn[k] - h1 * pm1[k];
          }
        for (unsigned k = 0; k < 2; ++k)
          flux[k] = h0 * flux[k] - h1 * flux_m1[k];
      }
    ion_history_qp      = std::move(cn);
    electron_history_qp = std::move(nn);
    hole_history_qp     = std::move(pn);
    field_flux_history  = flux;
    ion_step            = dt / device.scaling.t0;
    const Vector<double> before = solution;
    // A fresh Jacobian at the start of every step: the factorisation of the
    // last step belongs to another step length, and chord steps with it
    // contract slowly (measured: 10 to 13 steps against 4 to 5).
    factors_valid = false;
    // A step that Newton does not finish within time_step_iterations is
    // better repeated shorter than pursued (the caller halves it).
    auto attempt = [&] {
      return recycling ? solve_with_recycling(voltage, light, time_step_iterations)
                       : solve_fixed_generation(voltage, light, time_step_iterations);
    };
    NewtonReport rep;
    if (guess)
      {
        // Newton from the predicted state; from the last one if that fails.
        solution = *guess;
        rep      = attempt();
        if (!rep.converged)
          {
            solution               = before;
            const NewtonReport again = attempt();
            rep.converged = again.converged;
            rep.iterations += again.iterations;
            rep.factorisations += again.factorisations;
          }
      }
    else
      rep = attempt();
    if (!rep.converged)
      solution = before;
    if (rep.converged)
      {
        history.previous    = before;
        history.previous_dt = dt;
        frozen_ions_qp      = ion_density_qp(solution);
      }
    return rep;
  }
} // namespace backcomb::fem
