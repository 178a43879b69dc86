// Photon recycling as transport, coupled to the drift-diffusion solve
// (fem/recycling_operator.h). The re-absorbed generation depends on the
// state everywhere in the period, so it does not enter the (sparse) Newton
// Jacobian: each solve is an outer fixed-point iteration on the generation
// per column, g = K e(u(g)), where u(g) is the drift-diffusion state with
// g held fixed and e the net radiative emission per column. The plain
// iteration contracts like the recycled share of the recombination (close
// to 1 in a good film), so PETSc's Anderson mixing (SNESANDERSON) on the
// residual F(g) = g - K e(u(g)) accelerates it; each evaluation of F is
// one drift-diffusion solve from the last converged state, whose chord
// steps reuse the factorisation.
#include "fem/drift_diffusion.h"

#include <deal.II/base/mpi.h>

#include <petscsnes.h>

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace backcomb::fem
{
  using namespace dealii;

  namespace
  {
    constexpr unsigned c_psi = 0, c_phin = 1, c_phip = 2;

    // The radiative channel of a region, nullptr if it has none.
    const RecombinationChannel *
    radiative_channel(const ScaledRegion &r)
    {
      for (const auto &ch : r.channels)
        if (ch->name() == "radiative")
          return ch.get();
      return nullptr;
    }

    struct OuterIteration
    {
      double                scale = 1;
      NewtonReport          total;
      bool                  failed = false;
      unsigned              evaluations = 0;
      std::vector<double>   last_evaluated; // generation of the solver's state
      // Runs one drift-diffusion solve with generation `g`.
      std::function<NewtonReport(const std::vector<double> &)> solve_with;
      std::function<std::vector<double>()>                     re_emitted;
    };

    void
    add(NewtonReport &total, const NewtonReport &r)
    {
      total.iterations += r.iterations;
      total.factorisations += r.factorisations;
      total.chord_steps += r.chord_steps;
      total.chord_attempt_iterations += r.chord_attempt_iterations;
      total.seconds += r.seconds;
      total.update_history = r.update_history;
      total.worst_x        = r.worst_x;
      total.worst_y        = r.worst_y;
    }

    PetscErrorCode
    outer_residual(SNES snes, Vec x, Vec f, void *context)
    {
      auto              &it = *static_cast<OuterIteration *>(context);
      PetscInt           n  = 0;
      const PetscScalar *xa = nullptr;
      VecGetLocalSize(x, &n);
      VecGetArrayRead(x, &xa);
      std::vector<double> g(xa, xa + n);
      VecRestoreArrayRead(x, &xa);
      for (double &v : g)
        v *= it.scale;
      ++it.evaluations;
      const NewtonReport r = it.solve_with(g);
      add(it.total, r);
      if (!r.converged)
        {
          it.failed = true;
          return SNESSetFunctionDomainError(snes);
        }
      it.last_evaluated         = g;
      const std::vector<double> k = it.re_emitted();
      PetscScalar              *fa = nullptr;
      VecGetArray(f, &fa);
      for (PetscInt i = 0; i < n; ++i)
        fa[i] = (g[i] - k[i]) / it.scale;
      VecRestoreArray(f, &fa);
      return 0;
    }

    // Converged when the generation the state re-emits differs from the
    // one it was solved with by less than the tolerance (relative to the
    // scale) in every column.
    PetscErrorCode
    converged_in_every_column(SNES snes, PetscInt iteration, PetscReal, PetscReal, PetscReal,
                              SNESConvergedReason *reason, void *)
    {
      Vec       f;
      PetscReal worst = 0;
      SNESGetFunction(snes, &f, nullptr, nullptr);
      VecNorm(f, NORM_INFINITY, &worst);
      *reason = SNES_CONVERGED_ITERATING;
      if (worst < DriftDiffusionSolver::recycling_tolerance)
        *reason = SNES_CONVERGED_FNORM_ABS;
      else if (!std::isfinite(worst))
        *reason = SNES_DIVERGED_FNORM_NAN;
      else if (iteration >= 200)
        *reason = SNES_DIVERGED_MAX_IT;
      return 0;
    }
  } // namespace

  namespace
  {
    std::vector<double>
    from_zero(std::vector<double> edges)
    {
      const double x0 = edges.front();
      for (double &x : edges)
        x -= x0;
      return edges;
    }
  } // namespace

  FilmRecycling::FilmRecycling(const FilmOptics &film, const EmissionSpectrum &emission,
                               std::vector<double> column_edges_um)
    : thickness_cm(film.thickness_um * 1e-4)
    , transport(film, emission, from_zero(std::move(column_edges_um)))
  {}

  std::vector<double>
  FilmRecycling::reabsorbed(const std::vector<double> &emission, PhotonBalance *balance) const
  {
    std::vector<double> e(emission);
    for (double &v : e)
      v /= thickness_cm;
    PhotonBalance       b;
    std::vector<double> g = transport.apply(e, b);
    for (double &v : g)
      v *= thickness_cm;
    if (balance)
      *balance = b;
    return g;
  }

  RecyclingFactory
  film_recycling(const FilmOptics &film, const EmissionSpectrum &emission)
  {
    return [film, emission](const std::vector<double> &edges) {
      return std::make_unique<FilmRecycling>(film, emission, edges);
    };
  }

  void
  DriftDiffusionSolver::setup_recycling()
  {
    if (!device.recycling)
      return;
    // The absorber's columns: the distinct lateral extents of its cells.
    const double        eps = 1e-9 * width;
    std::vector<double> xs;
    auto extent = [](const auto &cell) {
      double x0 = 1e300, x1 = -1e300;
      for (unsigned v = 0; v < 4; ++v)
        x0 = std::min(x0, cell->vertex(v)[0]), x1 = std::max(x1, cell->vertex(v)[0]);
      return std::pair{x0, x1};
    };
    for (const auto &cell : tria.active_cell_iterators())
      if (device.region(cell->material_id()).absorber)
        {
          const auto [x0, x1] = extent(cell);
          xs.push_back(x0), xs.push_back(x1);
        }
    std::sort(xs.begin(), xs.end());
    for (const double x : xs)
      if (columns.edges.empty() || x > columns.edges.back() + eps)
        columns.edges.push_back(x);
    const std::size_t nc = columns.edges.size() - 1;
    columns.of_cell.assign(tria.n_active_cells(), -1);
    columns.thickness_um.assign(nc, 0.0);
    for (const auto &cell : tria.active_cell_iterators())
      if (device.region(cell->material_id()).absorber)
        {
          const auto [x0, x1] = extent(cell);
          const auto i = std::lower_bound(columns.edges.begin(), columns.edges.end(), x0 - eps) -
                         columns.edges.begin();
          if (std::size_t(i) >= nc || std::abs(columns.edges[i + 1] - x1) > eps)
            throw std::runtime_error("photon recycling as transport needs the absorber meshed in columns; "
                                     "the cell at x = " + std::to_string(x0) + " .. " + std::to_string(x1) +
                                     " um spans more than one");
          columns.of_cell[cell->active_cell_index()] = int(i);
          columns.thickness_um[i] += cell->measure() / (x1 - x0);
        }
    columns.recycled.assign(nc, 0.0);
    recycled_qp.assign(tria.n_active_cells() * cell_quadrature.size(), 0.0);
    recycling = device.recycling(columns.edges);
    columns.local_share = recycling->local_share();
    columns.radiative.assign(256, nullptr);
    for (const auto &[id, region] : device.regions)
      if (region.absorber && id < 256)
        columns.radiative[id] = radiative_channel(region);
  }

  std::vector<double>
  DriftDiffusionSolver::outer_part(const Vector<double> &u) const
  {
    const std::vector<double> e = column_emission(u);
    std::vector<double>       g = recycling->reabsorbed(e);
    for (std::size_t i = 0; i < g.size(); ++i)
      g[i] -= columns.local_share * e[i];
    return g;
  }

  std::vector<double>
  DriftDiffusionSolver::recycled_generation() const
  {
    std::vector<double> g = columns.recycled;
    if (recycling)
      {
        const std::vector<double> e = column_emission(solution);
        for (std::size_t i = 0; i < g.size(); ++i)
          g[i] += columns.local_share * e[i];
      }
    return g;
  }

  std::vector<double>
  DriftDiffusionSolver::columns_integral(
    const std::function<void(std::size_t, const ScaledRegion &, double *)> &rates) const
  {
    const std::size_t   nc = columns.thickness_um.size();
    const unsigned      nq = cell_quadrature.size();
    std::vector<double> sum(nc, 0.0), at_q(nq);
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const int c = columns.of_cell[cell->active_cell_index()];
        if (c < 0 || !cell->is_locally_owned())
          continue;
        const std::size_t ci = cell->active_cell_index();
        std::fill(at_q.begin(), at_q.end(), 0.0);
        rates(ci, device.region(cell->material_id()), at_q.data());
        for (unsigned q = 0; q < nq; ++q)
          sum[c] += at_q[q] * cell_cache.jxw[ci * nq + q];
      }
    Utilities::MPI::sum(sum, comm, sum);
    // Scaled rate times um^2 per um of column width -> cm^-2 s^-1.
    for (std::size_t i = 0; i < nc; ++i)
      sum[i] *= device.scaling.R0 * 1e-4 / (columns.edges[i + 1] - columns.edges[i]);
    return sum;
  }

  std::vector<double>
  DriftDiffusionSolver::column_emission(const Vector<double> &u) const
  {
    const unsigned nq = cell_quadrature.size();
    return columns_integral([&](const std::size_t ci, const ScaledRegion &r, double *rate) {
      const RecombinationChannel *ch = radiative_channel(r);
      if (!ch)
        return;
      const unsigned                 dpc = fe.n_dofs_per_cell();
      const types::global_dof_index *idx = &cell_cache.dofs[ci * dpc];
      double                         ul[4][4];
      for (unsigned i = 0; i < dpc; ++i)
        ul[cell_cache.component[i]][cell_cache.vertex[i]] = u[idx[i]];
      for (unsigned q = 0; q < nq; ++q)
        {
          double v[3] = {0, 0, 0};
          for (unsigned k = 0; k < 3; ++k)
            for (unsigned a = 0; a < 4; ++a)
              v[k] += ul[k][a] * cell_cache.phi[q][a];
          const double n = std::exp(v[c_psi] - v[c_phin] + r.a_n);
          const double p = std::exp(v[c_phip] - v[c_psi] + r.a_p);
          rate[q]        = ch->rate(n, p).R;
        }
    });
  }

  void
  DriftDiffusionSolver::set_recycled(const std::vector<double> &per_column)
  {
    columns.recycled  = per_column;
    const unsigned nq = cell_quadrature.size();
    for (const auto &cell : tria.active_cell_iterators())
      {
        const int c = columns.of_cell[cell->active_cell_index()];
        if (c < 0)
          continue;
        const double G = per_column[c] / (columns.thickness_um[c] * 1e-4) / device.scaling.R0;
        std::fill_n(recycled_qp.begin() + cell->active_cell_index() * nq, nq, G);
      }
  }

  PhotonBalance
  DriftDiffusionSolver::photon_balance() const
  {
    PhotonBalance b;
    if (recycling)
      recycling->reabsorbed(column_emission(solution), &b);
    return b;
  }

  NewtonReport
  DriftDiffusionSolver::solve_with_recycling(const double voltage, const double light,
                                             const unsigned iteration_budget)
  {
    const Vector<double>      start_state = solution;
    const double              start_bias = bias, start_light = light_factor;
    const std::vector<double> start_generation = columns.recycled;
    const std::size_t         nc               = columns.recycled.size();

    OuterIteration it;
    it.solve_with = [&](const std::vector<double> &g) {
      set_recycled(g);
      return solve_fixed_generation(voltage, light, iteration_budget);
    };
    it.re_emitted = [&]() { return outer_part(solution); };
    // The scale of the generation: the optical generation per column at
    // this light or the recycled one now, whichever is larger.
    double optical = 0;
    for (const double g : columns_integral([&](const std::size_t ci, const ScaledRegion &, double *rate) {
           for (unsigned q = 0; q < cell_quadrature.size(); ++q)
             rate[q] = light * generation_qp[ci * cell_quadrature.size() + q];
         }))
      optical = std::max(optical, std::abs(g));
    double recycled_now = 0;
    for (const double g : columns.recycled)
      recycled_now = std::max(recycled_now, std::abs(g));
    // In the dark both may vanish: then the emission of the state sets the
    // scale, and 1 pair cm^-2 s^-1 (1.6e-16 mA/cm^2) is the floor.
    it.scale = std::max({optical, recycled_now, 1.0});
    if (optical == 0)
      for (const double e : column_emission(solution))
        it.scale = std::max(it.scale, std::abs(e));

    SNES snes;
    Vec  x, r;
    VecCreateSeq(serial_communicator(), PetscInt(nc), &x);
    VecDuplicate(x, &r);
    {
      PetscScalar *xa = nullptr;
      VecGetArray(x, &xa);
      for (std::size_t i = 0; i < nc; ++i)
        xa[i] = columns.recycled[i] / it.scale;
      VecRestoreArray(x, &xa);
    }
    SNESCreate(serial_communicator(), &snes);
    SNESSetType(snes, SNESANDERSON);
    SNESSetFunction(snes, r, outer_residual, &it);
    SNESSetConvergenceTest(snes, converged_in_every_column, nullptr, nullptr);
    SNESSetTolerances(snes, 0, 0, 0, 200, 400);
    SNESSetOptionsPrefix(snes, "backcomb_recycling_");
    SNESSetFromOptions(snes);
    SNESSolve(snes, nullptr, x);
    SNESConvergedReason reason;
    SNESGetConvergedReason(snes, &reason);
    std::vector<double> g(nc);
    {
      const PetscScalar *xa = nullptr;
      VecGetArrayRead(x, &xa);
      for (std::size_t i = 0; i < nc; ++i)
        g[i] = xa[i] * it.scale;
      VecRestoreArrayRead(x, &xa);
    }
    SNESDestroy(&snes);
    VecDestroy(&x);
    VecDestroy(&r);

    bool converged = reason > 0 && !it.failed;
    // The state must be the one solved with the final generation.
    if (converged && g != it.last_evaluated)
      {
        const NewtonReport last = it.solve_with(g);
        add(it.total, last);
        converged = last.converged;
      }
    n_recycling += it.evaluations;
    NewtonReport rep = it.total;
    rep.converged    = converged;
    if (!converged)
      {
        solution     = start_state;
        bias         = start_bias;
        light_factor = start_light;
        set_recycled(start_generation);
      }
    return rep;
  }
} // namespace backcomb::fem
