#include "fem/drift_diffusion.h"
#include "fem/newton_rules.h"

#include "fem/anderson.h"
#include "fem/blas_lock.h"
#include "fem/edge_flux.h"
#include "geometry/ids.h"

#include <deal.II/base/array_view.h>
#include <deal.II/base/mpi.h>
#include <deal.II/base/quadrature_lib.h>
#include <deal.II/dofs/dof_tools.h>
#include <deal.II/fe/fe_q.h>
#include <deal.II/fe/fe_values.h>
#include <deal.II/fe/mapping_q1.h>
#include <deal.II/distributed/tria_base.h>
#include <deal.II/lac/dynamic_sparsity_pattern.h>
#include <deal.II/lac/sparsity_tools.h>
#include <deal.II/numerics/vector_tools.h>

#include <petscdm.h>
#include <petscksp.h>
#include <petscsnes.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <optional>

namespace backcomb::fem
{
  using namespace dealii;
  namespace ids = backcomb::geometry::ids;

  namespace
  {
    // Component numbers of the unknowns.
    constexpr unsigned c_psi = 0, c_phin = 1, c_phip = 2, c_ion = 3;

    // PETSc error codes become exceptions (caught as failed solves).
    void
    check(const PetscErrorCode code, const char *what)
    {
      if (code != 0)
        throw std::runtime_error(std::string("PETSc failed in ") + what);
    }

    // A PETSc vector as a complete deal.II vector. On one process it is
    // copied from its array: deal.II's conversion builds and destroys a
    // scatter to all processes on every call, which cost 0.4 ms per Newton
    // step (7 % of a chord step) on the short-film case at 50 um.
    Vector<double>
    complete(const PETScWrappers::MPI::Vector &v)
    {
      if (Utilities::MPI::n_mpi_processes(v.get_mpi_communicator()) > 1)
        return Vector<double>(v);
      Vector<double>     out(v.size());
      const PetscScalar *a;
      check(VecGetArrayRead(static_cast<const Vec &>(v), &a), "VecGetArrayRead");
      std::copy(a, a + out.size(), out.begin());
      check(VecRestoreArrayRead(static_cast<const Vec &>(v), &a), "VecRestoreArrayRead");
      return out;
    }

    // The diagonal block of a parallel matrix: on one process the whole
    // matrix, a sequential AIJ matrix whose arrays can be written directly
    // and which the sequential solvers take without a copy.
    Mat
    seq_block(Mat A)
    {
      Mat             diagonal, off;
      const PetscInt *columns;
      check(MatMPIAIJGetSeqAIJ(A, &diagonal, &off, &columns), "MatMPIAIJGetSeqAIJ");
      return diagonal;
    }

    // A KSP that solves with one LU factorisation by PETSc's LU package
    // `package` (PETSc's own with nested-dissection ordering); a failed
    // factorisation shows in the converged reason, not as an error.
    KSP
    direct_solver(const MPI_Comm comm, const std::string &package)
    {
      KSP ksp;
      PC  pc;
      check(KSPCreate(comm, &ksp), "KSPCreate");
      check(KSPSetType(ksp, KSPPREONLY), "KSPSetType");
      check(KSPGetPC(ksp, &pc), "KSPGetPC");
      check(PCSetType(pc, PCLU), "PCSetType");
      check(PCFactorSetMatSolverType(pc, package.c_str()), "PCFactorSetMatSolverType");
      if (package == MATSOLVERPETSC)
        check(PCFactorSetMatOrderingType(pc, MATORDERINGND), "PCFactorSetMatOrderingType");
      check(KSPSetErrorIfNotConverged(ksp, PETSC_FALSE), "KSPSetErrorIfNotConverged");
      return ksp;
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
                                             const NumericsParameters &numerics_,
                                             const MPI_Comm own_comm,
                                             const std::string &lu_package_)
    : tria(tria_)
    , device(device_)
    , numerics(numerics_)
    , comm(MPI_COMM_SELF)
    , n_components(device_.has_ions() ? 4 : 3)
    , fe(FE_Q<2>(1), n_components)
    , dofs(tria_)
    , cell_quadrature(numerics_.quadrature)
    , face_quadrature(numerics_.quadrature)
    , fe_values(std::make_unique<FEValues<2>>(fe, cell_quadrature,
                                              update_values | update_gradients | update_JxW_values))
    , fe_face_values(std::make_unique<FEFaceValues<2>>(fe, face_quadrature,
                                                       update_values | update_JxW_values))
  {
    if (const auto *p = dynamic_cast<const parallel::TriangulationBase<2> *>(&tria))
      comm = p->get_communicator();
    if (own_comm != MPI_COMM_NULL)
      {
        AssertThrow(Utilities::MPI::n_mpi_processes(own_comm) == Utilities::MPI::n_mpi_processes(comm),
                    ExcMessage("a solver's own communicator spans the processes of its mesh"));
        comm = own_comm;
      }
    lu_package = lu_package_;
    // PETSc registers its classes and their types at first use, which is
    // not thread-safe: done here, before a solver may work in a thread.
    for (PetscErrorCode (*init)() : {VecInitializePackage, MatInitializePackage, DMInitializePackage,
                                     PCInitializePackage, KSPInitializePackage, SNESInitializePackage})
      check(init(), "PETSc package registration");
    AssertThrow(lu_package == MATSOLVERMUMPS || Utilities::MPI::n_mpi_processes(comm) == 1,
                ExcMessage("LU package " + lu_package + " factorises on one process only"));
    double xmin = 1e300, xmax = -1e300;
    for (const auto &v : tria.get_vertices())
      {
        xmin = std::min(xmin, v[0]);
        xmax = std::max(xmax, v[0]);
      }
    width = xmax - xmin;
    setup_system();
    cache_cell_geometry();
    precompute_generation();
    setup_recycling();
  }

  DriftDiffusionSolver::~DriftDiffusionSolver()
  {
    const BlasTurn turn;
    if (ksp)
      KSPDestroy(&ksp);
    if (potential_ksp)
      KSPDestroy(&potential_ksp);
    if (potential_block)
      MatDestroy(&potential_block);
    if (potential_rows)
      ISDestroy(&potential_rows);
  }

  // Direct LU solve with `lu_package` (MUMPS unless the solver was made
  // with another) through PETSc: J x = b or J^T x = b. The
  // KSP object lives as long as the solver, so that the symbolic
  // factorisation (ordering) is reused; PETSc refactorises numerically
  // only when the matrix values changed since the last solve, so a chord
  // step (new right-hand side, same matrix) costs one back-substitution.
  // The PETSc options database is read last (e.g. PETSC_OPTIONS=
  // "-pc_factor_mat_solver_type umfpack" to compare direct solvers).
  // PETSc's own LU ("petsc", nested-dissection ordering) does not pivot:
  // each of its solutions is checked by its normwise backward error
  // |J x - b| / (|J| |x| + |b|) in the maximum norm (N. J. Higham,
  // Accuracy and Stability of Numerical Algorithms, 2nd ed. 2002, Thm.
  // 7.1), and above 1e-12, or where it meets a zero pivot, the solver
  // moves to KLU (SuiteSparse; partial pivoting) for good and solves again.
  // Returns false if the factorisation failed (e.g. a singular Jacobian).
  bool
  DriftDiffusionSolver::lu_solve(const Vec b, Vec x, const bool transpose) const
  {
    // The packages that call BLAS take turns (fem/blas_lock.h); PETSc's
    // own LU and KLU do not call it.
    const bool              blas = lu_package != MATSOLVERPETSC && lu_package != MATSOLVERKLU;
    std::optional<BlasTurn> turn;
    if (blas)
      turn.emplace();
    if (!ksp)
      {
        ksp = direct_solver(comm, lu_package);
        check(KSPSetFromOptions(ksp), "KSPSetFromOptions");
      }
    const auto t0 = std::chrono::steady_clock::now();
    struct Clock
    {
      std::chrono::steady_clock::time_point t0;
      double                               &total;
      ~Clock() { total += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count(); }
    } clock{t0, t_solve};
    Mat A = static_cast<Mat>(jacobian);
    if (Utilities::MPI::n_mpi_processes(comm) == 1)
      A = seq_block(A);
    check(KSPSetOperators(ksp, A, A), "KSPSetOperators");
    // KSPSetUp factorises when the matrix changed since the last call and
    // does nothing otherwise (a chord step).
    const auto     t_setup = std::chrono::steady_clock::now();
    PetscErrorCode code    = KSPSetUp(ksp);
    if (!factors_valid)
      {
        ++n_factorisations;
        t_factorise += std::chrono::duration<double>(std::chrono::steady_clock::now() - t_setup).count();
      }
    if (code == 0)
      code = transpose ? KSPSolveTranspose(ksp, b, x) : KSPSolve(ksp, b, x);
    KSPConvergedReason reason = KSP_DIVERGED_BREAKDOWN;
    if (code == 0)
      KSPGetConvergedReason(ksp, &reason);
    bool ok = code == 0 && reason >= 0;
    if (ok && lu_package == MATSOLVERPETSC)
      {
        Vec       r;
        PetscReal norm_A = 0, norm_x = 0, norm_b = 0, norm_r = 0;
        check(VecDuplicate(b, &r), "VecDuplicate");
        check(transpose ? MatMultTranspose(A, x, r) : MatMult(A, x, r), "MatMult");
        check(VecAXPY(r, -1.0, b), "VecAXPY");
        double &norm = jacobian_norm[transpose];
        if (norm < 0)
          check(MatNorm(A, transpose ? NORM_1 : NORM_INFINITY, &norm), "MatNorm");
        norm_A = norm;
        check(VecNorm(x, NORM_INFINITY, &norm_x), "VecNorm");
        check(VecNorm(b, NORM_INFINITY, &norm_b), "VecNorm");
        check(VecNorm(r, NORM_INFINITY, &norm_r), "VecNorm");
        check(VecDestroy(&r), "VecDestroy");
        ok = norm_r <= 1e-12 * (norm_A * norm_x + norm_b);
      }
    if (!ok)
      {
        // Start afresh next time: a failed factorisation leaves the PC in
        // an error state.
        KSPDestroy(&ksp);
        ksp = nullptr;
        if (lu_package == MATSOLVERPETSC)
          {
            lu_package = MATSOLVERKLU;
            return lu_solve(b, x, transpose);
          }
        return false;
      }
    return true;
  }

  // J_psipsi dpsi = b_psi, the other unknowns of x zero: Newton's step in
  // thermal equilibrium without mobile ions from phi_n = phi_p = 0. There
  // every recombination rate, surface rate and flux vanishes for any psi
  // (n p = n_i^2, flat quasi-Fermi levels; contacts at 0 V), so the
  // continuity rows of the residual and their derivatives along psi are
  // zero, the full step leaves phi_n and phi_p at zero, and its psi part
  // solves this block (a third of the unknowns, about a tenth of the full
  // factorisation's time). With the solver's LU package (MUMPS) on the
  // solver's communicator.
  bool
  DriftDiffusionSolver::lu_solve_potential(const Vec b, Vec x) const
  {
    const BlasTurn turn;
    if (!potential_rows)
      {
        const IndexSet psi =
          DoFTools::extract_dofs(dofs, fe.component_mask(FEValuesExtractors::Scalar(c_psi))) & owned;
        std::vector<PetscInt> rows(psi.begin(), psi.end());
        check(ISCreateGeneral(comm, PetscInt(rows.size()), rows.data(), PETSC_COPY_VALUES, &potential_rows),
              "ISCreateGeneral");
      }
    const auto t0 = std::chrono::steady_clock::now();
    check(MatCreateSubMatrix(static_cast<Mat>(jacobian), potential_rows, potential_rows,
                             potential_block ? MAT_REUSE_MATRIX : MAT_INITIAL_MATRIX, &potential_block),
          "MatCreateSubMatrix");
    if (!potential_ksp)
      potential_ksp = direct_solver(comm, MATSOLVERMUMPS);
    check(KSPSetOperators(potential_ksp, potential_block, potential_block), "KSPSetOperators");
    check(VecSet(x, 0.0), "VecSet");
    Vec b_psi, x_psi;
    check(VecGetSubVector(b, potential_rows, &b_psi), "VecGetSubVector");
    check(VecGetSubVector(x, potential_rows, &x_psi), "VecGetSubVector");
    PetscErrorCode     code   = KSPSolve(potential_ksp, b_psi, x_psi);
    KSPConvergedReason reason = KSP_DIVERGED_BREAKDOWN;
    if (code == 0)
      KSPGetConvergedReason(potential_ksp, &reason);
    check(VecRestoreSubVector(x, potential_rows, &x_psi), "VecRestoreSubVector");
    check(VecRestoreSubVector(b, potential_rows, &b_psi), "VecRestoreSubVector");
    t_solve += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    if (code != 0 || reason < 0)
      {
        KSPDestroy(&potential_ksp);
        potential_ksp = nullptr;
        return false;
      }
    return true;
  }

  MPI_Comm
  DriftDiffusionSolver::serial_communicator() const
  {
    return Utilities::MPI::n_mpi_processes(comm) == 1 ? comm : MPI_COMM_SELF;
  }

  std::vector<types::global_dof_index>
  DriftDiffusionSolver::boundary_dofs(const unsigned b, const unsigned c) const
  {
    std::vector<types::global_dof_index> out, idx(fe.n_dofs_per_face());
    for (const auto &cell : dofs.active_cell_iterators())
      for (const unsigned f : cell->face_indices())
        if (cell->face(f)->at_boundary() && cell->face(f)->boundary_id() == b)
          {
            cell->face(f)->get_dof_indices(idx);
            for (unsigned i = 0; i < idx.size(); ++i)
              if (fe.face_system_to_component_index(i).first == c)
                out.push_back(idx[i]);
          }
    std::sort(out.begin(), out.end());
    out.erase(std::unique(out.begin(), out.end()), out.end());
    return out;
  }

  void
  DriftDiffusionSolver::setup_system()
  {
    dofs.distribute_dofs(fe);
    owned = dofs.locally_owned_dofs();
    DoFTools::extract_locally_relevant_dofs(dofs, relevant);

    for (unsigned c = 0; c < 3; ++c)
      {
        hole_contact_dofs[c]     = boundary_dofs(ids::hole_contact, c);
        electron_contact_dofs[c] = boundary_dofs(ids::electron_contact, c);
      }

    // The update vanishes where values are prescribed: psi at both contacts,
    // the quasi-Fermi potentials where the contact model pins them.
    zero_constraints.clear();
    const bool pinned[2] = {device.electron_contact.model->pins_quasi_fermi_levels(),
                            device.hole_contact.model->pins_quasi_fermi_levels()};
    for (unsigned c = 0; c < 3; ++c)
      {
        if (c == c_psi || pinned[0])
          for (const auto i : electron_contact_dofs[c])
            zero_constraints.add_line(i);
        if (c == c_psi || pinned[1])
          for (const auto i : hole_contact_dofs[c])
            zero_constraints.add_line(i);
      }
    // Mobile ions: the ion DoFs of cells without ions take no part (their
    // update is 0); in the steady state the others are tied to the first.
    std::vector<types::global_dof_index> ion_dofs;
    ion_nodes_.clear();
    if (n_components == 4)
      {
        std::vector<bool> in_ion_cell(dofs.n_dofs(), false), ion_component(dofs.n_dofs(), false);
        std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
        for (const auto &cell : dofs.active_cell_iterators())
          {
            cell->get_dof_indices(idx);
            const bool ions = device.region(cell->material_id()).ion_density > 0;
            for (unsigned i = 0; i < idx.size(); ++i)
              if (fe.system_to_component_index(i).first == c_ion)
                {
                  if (ions && !in_ion_cell[idx[i]])
                    {
                      const unsigned v = fe.system_to_component_index(i).second;
                      ion_nodes_.push_back({idx[i], idx[fe.component_to_system_index(c_psi, v)],
                                            device.region(cell->material_id()).ion_z});
                    }
                  ion_component[idx[i]] = true;
                  in_ion_cell[idx[i]]   = in_ion_cell[idx[i]] || ions;
                }
          }
        for (types::global_dof_index i = 0; i < dofs.n_dofs(); ++i)
          if (ion_component[i] && in_ion_cell[i])
            ion_dofs.push_back(i);
          else if (ion_component[i])
            zero_constraints.add_line(i);
      }
    ion_region_dofs = ion_dofs.size();
    zero_constraints.close();
    steady_constraints.clear();
    steady_constraints.merge(zero_constraints);
    for (std::size_t k = 1; k < ion_dofs.size(); ++k)
      {
        steady_constraints.add_line(ion_dofs[k]);
        steady_constraints.add_entry(ion_dofs[k], ion_dofs[0], 1.0);
      }
    steady_constraints.close();

    // With ions, the tie couples the first ion DoF to every unknown of the
    // ion region: all rows are kept on every process before distribution.
    // The pattern holds both modes' entries (steady and transient).
    const IndexSet         stored = has_ions() ? complete_index_set(dofs.n_dofs()) : relevant;
    DynamicSparsityPattern dsp(stored);
    DoFTools::make_sparsity_pattern(dofs, dsp, steady_constraints, has_ions());
    SparsityTools::distribute_sparsity_pattern(dsp, owned, comm, stored);
    jacobian.reinit(owned, owned, dsp, comm);
    rhs.reinit(owned, comm);
    row_scale.reinit(owned, comm);
    solution.reinit(dofs.n_dofs());

    // Nodal positions of every DoF (for diagnostics).
    support_points.resize(dofs.n_dofs());
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        cell->get_dof_indices(idx);
        for (unsigned v = 0; v < 4; ++v)
          for (unsigned c = 0; c < n_components; ++c)
            support_points[idx[fe.component_to_system_index(c, v)]] = cell->vertex(v);
      }
  }

  void
  DriftDiffusionSolver::precompute_generation()
  {
    const Quadrature<2> &quad = cell_quadrature;
    FEValues<2>          fv(fe, quad, update_quadrature_points);
    generation_qp.assign(tria.n_active_cells() * quad.size(), 0.0);
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        const ScaledRegion &r = device.region(cell->material_id());
        fv.reinit(cell);
        if (device.fixed_charge)
          {
            fixed_charge_qp.resize(generation_qp.size());
            for (unsigned q = 0; q < quad.size(); ++q)
              fixed_charge_qp[cell->active_cell_index() * quad.size() + q] =
                device.fixed_charge(fv.quadrature_point(q)[0], fv.quadrature_point(q)[1]) / device.scaling.N0;
          }
        if (!r.absorber || !device.generation)
          continue;
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
    const double V[2] = {0.0, voltage / device.scaling.Vt};
    const ScaledContact *contact[2] = {&device.electron_contact, &device.hole_contact};
    const std::vector<types::global_dof_index> *list[2] = {electron_contact_dofs, hole_contact_dofs};
    for (unsigned k = 0; k < 2; ++k)
      {
        for (const auto i : list[k][c_psi])
          u[i] = V[k] + contact[k]->psi_offset;
        if (contact[k]->model->pins_quasi_fermi_levels())
          for (const unsigned c : {c_phin, c_phip})
            for (const auto i : list[k][c])
              u[i] = V[k];
      }
  }

  void
  DriftDiffusionSolver::cache_cell_geometry()
  {
    // Shape values of the scalar Q1 element at the quadrature points are
    // those of the reference cell; gradients and JxW are stored per cell
    // (the mesh never changes), so that an assembly needs no mapping.
    const FiniteElement<2> &base = fe.base_element(0);
    const unsigned          nq   = cell_quadrature.size();
    for (unsigned q = 0; q < nq; ++q)
      for (unsigned a = 0; a < 4; ++a)
        cell_cache.phi[q][a] = base.shape_value(a, cell_quadrature.point(q));
    for (unsigned i = 0; i < fe.n_dofs_per_cell(); ++i)
      {
        cell_cache.component[i] = fe.system_to_component_index(i).first;
        cell_cache.vertex[i]    = fe.system_to_component_index(i).second;
      }
    const std::size_t n   = tria.n_active_cells();
    const unsigned    dpc = fe.n_dofs_per_cell();
    cell_cache.grad.assign(n * nq * 8, 0.0);
    cell_cache.jxw.assign(n * nq, 0.0);
    cell_cache.dofs.assign(n * dpc, 0);
    const bool fitted = numerics.carrier_flux == NumericsParameters::CarrierFlux::edge_averaged;
    cell_cache.edge_w.assign(fitted ? n * 6 : 0, 0.0);
    FEValues<2>                          fv(base, cell_quadrature, update_gradients | update_JxW_values);
    // The vertex rule (2 x 2 Gauss-Lobatto points) for the edge weights.
    FEValues<2> fv_edges(base, QGaussLobatto<2>(2), update_gradients | update_JxW_values);
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        const std::size_t c = cell->active_cell_index();
        cell->get_dof_indices(idx);
        std::copy(idx.begin(), idx.end(), cell_cache.dofs.begin() + c * dpc);
        if (!cell->is_locally_owned())
          continue;
        fv.reinit(typename Triangulation<2>::active_cell_iterator(cell));
        if (fitted)
          {
            fv_edges.reinit(typename Triangulation<2>::active_cell_iterator(cell));
            double K[6] = {}, largest = 0;
            for (unsigned e = 0; e < 6; ++e)
              {
                for (unsigned q = 0; q < 4; ++q)
                  K[e] += fv_edges.shape_grad(q1_edge_pairs[e][0], q) * fv_edges.shape_grad(q1_edge_pairs[e][1], q) *
                          fv_edges.JxW(q);
                largest = std::max(largest, std::abs(K[e]));
              }
            // On a rectangle the diagonals' weights vanish; drop their rounding.
            for (unsigned e = 0; e < 6; ++e)
              cell_cache.edge_w[c * 6 + e] = std::abs(K[e]) > 1e-12 * largest ? -K[e] : 0.0;
          }
        for (unsigned q = 0; q < nq; ++q)
          {
            cell_cache.jxw[c * nq + q] = fv.JxW(q);
            for (unsigned a = 0; a < 4; ++a)
              for (unsigned d = 0; d < 2; ++d)
                cell_cache.grad[(c * nq + q) * 8 + 2 * a + d] = fv.shape_grad(a, q)[d];
          }
      }
  }

  template <typename CellIterator>
  void
  DriftDiffusionSolver::assemble_cell(const CellIterator &cell,
                                      const Vector<double> &u,
                                      const double light,
                                      FullMatrix<double> *Aptr,
                                      Vector<double> &F,
                                      const bool with_contacts) const
  {
    const Quadrature<1> &face_quad = face_quadrature;
    FEFaceValues<2> &ffv       = *fe_face_values;

    const unsigned     nc  = n_components; // psi, phi_n, phi_p (, phi_c)
    const unsigned     dpc = 4 * nc;       // Q1
    const unsigned     nq  = cell_quadrature.size();
    const std::size_t  ci  = cell->active_cell_index();
    const types::global_dof_index *idx = &cell_cache.dofs[ci * dpc];
    const unsigned *comp = cell_cache.component;

    const ScaledRegion &r = device.region(cell->material_id());
    // Nodal values per component and vertex; residual and Jacobian in the
    // same (component, vertex) layout, copied to the system order at the end.
    double ul[4][4];
    for (unsigned i = 0; i < dpc; ++i)
      ul[comp[i]][cell_cache.vertex[i]] = u[idx[i]];
    double f[4][4] = {};
    double a[4][4][4][4];
    if (Aptr)
      std::fill(&a[0][0][0][0], &a[0][0][0][0] + 256, 0.0);
    const bool ions    = r.ion_density > 0;
    const bool storage = transient && ion_step > 0; // a time step, not an instantaneous change
    const bool fitted  = !cell_cache.edge_w.empty();
    for (unsigned q = 0; q < nq; ++q)
      {
        const double *phi = cell_cache.phi[q];
        const double *gq  = &cell_cache.grad[(ci * nq + q) * 8];
        double        v[4] = {0, 0, 0, 0}, g[4][2] = {{0, 0}, {0, 0}, {0, 0}, {0, 0}};
        for (unsigned c = 0; c < nc; ++c)
          for (unsigned k = 0; k < 4; ++k)
            {
              v[c] += ul[c][k] * phi[k];
              g[c][0] += ul[c][k] * gq[2 * k];
              g[c][1] += ul[c][k] * gq[2 * k + 1];
            }
        const double n     = std::exp(v[c_psi] - v[c_phin] + r.a_n);
        const double p     = std::exp(v[c_phip] - v[c_psi] + r.a_p);
        Rate         k     = bulk_rate(r, n, p);
        if (columns.local_share > 0)
          if (const RecombinationChannel *rad = columns.radiative[cell->material_id()])
            {
              // Photon recycling as transport: the share re-absorbed on the spot.
              const Rate kr = rad->rate(n, p);
              k.R -= columns.local_share * kr.R;
              k.dR_dn -= columns.local_share * kr.dR_dn;
              k.dR_dp -= columns.local_share * kr.dR_dp;
            }
        const double G     = light * generation_qp[ci * nq + q] + (recycled_qp.empty() ? 0.0 : recycled_qp[ci * nq + q]);
        const double fixed = fixed_charge_qp.empty() ? 0.0 : fixed_charge_qp[ci * nq + q];
        const double dx    = cell_cache.jxw[ci * nq + q];
        // Derivatives of R with respect to (psi, phi_n, phi_p).
        const double dR[3]   = {k.dR_dn * n - k.dR_dp * p, -k.dR_dn * n, k.dR_dp * p};
        // Galerkin fluxes here; fitted fluxes are added edge by edge below.
        const double jn_coef = fitted ? 0.0 : r.mu_n * n, jp_coef = fitted ? 0.0 : r.mu_p * p;
        // Mobile ions: density c, its charge z (c - N_ion) against the fixed
        // background, and their row: the ion number in the steady state;
        // in a transient dc/dt + div F = 0 with F = -mu_c z c grad phi_c,
        // discretised as beta c - hist + dt div F = 0 (ion_beta, ion_step).
        const double z       = r.ion_z;
        const double Nion    = r.ion_density * ion_scale;
        const double cion    = ions ? Nion * std::exp(z * (v[c_ion] - v[c_psi])) : 0.0;
        const double hist    = ions && transient ? ion_history_qp[ci * nq + q] : 0.0;
        const double jc_coef = r.ion_mu * z * cion;
        const double charge  = p - n + r.doping + fixed + (ions ? z * (cion - Nion) : 0.0);
        // Storage of electrons and holes in a time step: dn/dt = (beta n -
        // hist) / dt; it enters the continuity rows beside R - G.
        const double sn = storage ? (ion_beta * n - electron_history_qp[ci * nq + q]) / ion_step : 0.0;
        const double sp = storage ? (ion_beta * p - hole_history_qp[ci * nq + q]) / ion_step : 0.0;
        const double bn = storage ? ion_beta / ion_step * n : 0.0, bp = storage ? ion_beta / ion_step * p : 0.0;
        for (unsigned i = 0; i < 4; ++i)
          {
            const double vi = phi[i] * dx, gi0 = gq[2 * i] * dx, gi1 = gq[2 * i + 1] * dx;
            const double gpsi = g[c_psi][0] * gi0 + g[c_psi][1] * gi1;
            const double gn   = g[c_phin][0] * gi0 + g[c_phin][1] * gi1;
            const double gp   = g[c_phip][0] * gi0 + g[c_phip][1] * gi1;
            f[c_psi][i] += r.eps * gpsi - charge * vi;
            f[c_phin][i] += jn_coef * gn - (k.R - G + sn) * vi;
            f[c_phip][i] += jp_coef * gp + (k.R - G + sp) * vi;
            const double gc = ions ? g[c_ion][0] * gi0 + g[c_ion][1] * gi1 : 0.0;
            if (ions)
              f[c_ion][i] += transient ? (ion_beta * cion - hist) * vi + ion_step * jc_coef * gc
                                       : (cion - Nion) * vi;
            if (!Aptr)
              continue;
            for (unsigned j = 0; j < 4; ++j)
              {
                const double wj = phi[j];
                const double K  = gq[2 * j] * gi0 + gq[2 * j + 1] * gi1; // grad w_j . grad v_i dx
                const double M  = wj * vi;                               // w_j v_i dx
                a[c_psi][i][c_psi][j] += r.eps * K + (p + n) * M;
                a[c_psi][i][c_phin][j] -= n * M;
                a[c_psi][i][c_phip][j] -= p * M;
                a[c_phin][i][c_psi][j] += jn_coef * wj * gn - dR[0] * M;
                a[c_phin][i][c_phin][j] += -jn_coef * wj * gn + jn_coef * K - dR[1] * M;
                a[c_phin][i][c_phip][j] -= dR[2] * M;
                a[c_phip][i][c_psi][j] += -jp_coef * wj * gp + dR[0] * M;
                a[c_phip][i][c_phin][j] += dR[1] * M;
                a[c_phip][i][c_phip][j] += jp_coef * wj * gp + jp_coef * K + dR[2] * M;
                if (storage)
                  {
                    // dn/dpsi = n, dn/dphi_n = -n, dp/dpsi = -p, dp/dphi_p = p.
                    a[c_phin][i][c_psi][j] -= bn * M;
                    a[c_phin][i][c_phin][j] += bn * M;
                    a[c_phip][i][c_psi][j] -= bp * M;
                    a[c_phip][i][c_phip][j] += bp * M;
                  }
                if (!ions)
                  continue;
                // dc/dpsi = -z c, dc/dphi_c = z c.
                const double zzc = z * z * cion;
                a[c_psi][i][c_psi][j] += zzc * M;
                a[c_psi][i][c_ion][j] -= zzc * M;
                if (transient)
                  {
                    a[c_ion][i][c_psi][j] += -ion_beta * z * cion * M - ion_step * r.ion_mu * zzc * wj * gc;
                    a[c_ion][i][c_ion][j] +=
                      ion_beta * z * cion * M + ion_step * (r.ion_mu * zzc * wj * gc + jc_coef * K);
                  }
                else
                  {
                    a[c_ion][i][c_psi][j] -= z * cion * M;
                    a[c_ion][i][c_ion][j] += z * cion * M;
                  }
              }
          }
      }
    if (fitted)
      {
        // Exponentially fitted electron and hole fluxes along each edge
        // (fem/edge_flux.h): row i gains the flux from j, row j loses it.
        EdgeFlux fluxes[6];
        cell_edge_fluxes(&cell_cache.edge_w[ci * 6], r.mu_n, r.mu_p, r.a_n, r.a_p, ul[c_psi], ul[c_phin],
                         ul[c_phip], fluxes);
        for (unsigned e = 0; e < 6; ++e)
          {
            if (cell_cache.edge_w[ci * 6 + e] == 0)
              continue;
            const unsigned  i = q1_edge_pairs[e][0], j = q1_edge_pairs[e][1];
            const EdgeFlux &k = fluxes[e];
            f[c_phin][i] += k.n;
            f[c_phin][j] -= k.n;
            f[c_phip][i] -= k.p;
            f[c_phip][j] += k.p;
            if (!Aptr)
              continue;
            for (const unsigned row : {i, j})
              {
                const double sn = row == i ? 1.0 : -1.0;
                a[c_phin][row][c_psi][i] += sn * k.dn_dpsi_i;
                a[c_phin][row][c_psi][j] += sn * k.dn_dpsi_j;
                a[c_phin][row][c_phin][i] += sn * k.dn_dphin_i;
                a[c_phin][row][c_phin][j] += sn * k.dn_dphin_j;
                a[c_phip][row][c_psi][i] -= sn * k.dp_dpsi_i;
                a[c_phip][row][c_psi][j] -= sn * k.dp_dpsi_j;
                a[c_phip][row][c_phip][i] -= sn * k.dp_dphip_i;
                a[c_phip][row][c_phip][j] -= sn * k.dp_dphip_j;
              }
          }
      }
    for (unsigned i = 0; i < dpc; ++i)
      {
        F(i) = f[comp[i]][cell_cache.vertex[i]];
        if (Aptr)
          for (unsigned j = 0; j < dpc; ++j)
            (*Aptr)(i, j) = a[comp[i]][cell_cache.vertex[i]][comp[j]][cell_cache.vertex[j]];
      }

    // Boundary terms: contact fluxes (contact models that do not pin the
    // quasi-Fermi levels) and surface recombination. On symmetry sides the
    // normal flux is zero.
    for (const unsigned f : cell->face_indices())
      {
        if (!cell->face(f)->at_boundary())
          continue;
        const auto           bid     = cell->face(f)->boundary_id();
        const ScaledContact *contact = device.contact_at(bid);
        const ScaledSurface *surface = device.surface_at(bid);
        if (contact && (contact->model->pins_quasi_fermi_levels() || !with_contacts))
          continue;
        const std::vector<std::shared_ptr<const SurfaceChannel>> *surface_channels =
          surface ? &surface->next_to(cell->material_id()) : nullptr;
        if (surface && surface_channels->empty())
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
        for (unsigned q = 0; q < face_quad.size(); ++q)
          {
            double v[4] = {0, 0, 0, 0};
            for (unsigned i = 0; i < dpc; ++i)
              v[comp[i]] += u[idx[i]] * ffv.shape_value(i, q);
            const double n  = std::exp(v[c_psi] - v[c_phin] + r.a_n);
            const double p  = std::exp(v[c_phip] - v[c_psi] + r.a_p);
            const double ds = ffv.JxW(q);
            // Electron and hole particle fluxes out of the absorber and
            // their derivatives with respect to (psi, phi_n, phi_p), from
            // those with respect to n and p (dn/dpsi = n, dn/dphi_n = -n,
            // dp/dpsi = -p, dp/dphi_p = p).
            double fn = 0, fp = 0, dfn[4] = {0, 0, 0, 0}, dfp[4] = {0, 0, 0, 0};
            if (contact)
              {
                const ContactFlux k = contact->model->flux(n, p, n0, p0);
                fn     = k.electrons;
                fp     = k.holes;
                dfn[0] = k.d_electrons_dn * n - k.d_electrons_dp * p;
                dfn[1] = -k.d_electrons_dn * n;
                dfn[2] = k.d_electrons_dp * p;
                dfp[0] = k.d_holes_dn * n - k.d_holes_dp * p;
                dfp[1] = -k.d_holes_dn * n;
                dfp[2] = k.d_holes_dp * p;
              }
            else
              {
                // A surface channel takes one electron and one hole per
                // event: both fluxes equal its rate.
                const Rate k = surface_rate(*surface_channels, n, p);
                fn = fp = k.R;
                dfn[0] = dfp[0] = k.dR_dn * n - k.dR_dp * p;
                dfn[1] = dfp[1] = -k.dR_dn * n;
                dfn[2] = dfp[2] = k.dR_dp * p;
              }
            for (unsigned i = 0; i < dpc; ++i)
              {
                const double vi = ffv.shape_value(i, q);
                if (comp[i] == c_psi || comp[i] == c_ion || vi == 0)
                  continue;
                const double  sign  = comp[i] == c_phin ? -1.0 : 1.0;
                const double  flux  = comp[i] == c_phin ? fn : fp;
                const double *dflux = comp[i] == c_phin ? dfn : dfp;
                F(i) += sign * flux * vi * ds;
                if (Aptr)
                  for (unsigned j = 0; j < dpc; ++j)
                    (*Aptr)(i, j) += sign * dflux[comp[j]] * ffv.shape_value(j, q) * vi * ds;
              }
          }
      }
  }

  // The cell matrices and residuals go straight into the arrays of the
  // matrix and of the right-hand side, at positions found once per
  // constraints object, instead of through AffineConstraints::
  // distribute_local_to_global and MatSetValues (6.3 of 14 ms per Jacobian
  // and 0.6 of 2.7 ms per residual on the short-film case at 50 um). The
  // result is the same matrix bit for bit: each entry gains the same cell
  // values in the same cell order; a constrained row gets the diagonal
  // deal.II gives it (|A_ii| of the cell, or the mean |A_jj| where that is
  // zero) and no right-hand side; entries in constrained columns are dropped.
  // Taken on one process and for constraints that only fix values (the
  // ion tie and several processes take the general route).
  bool
  DriftDiffusionSolver::direct_assembly() const
  {
    const AffineConstraints<double> &cm = constraints();
    if (csr_for == &cm)
      return !csr_position.empty();
    csr_for = &cm;
    csr_position.clear();
    if (Utilities::MPI::n_mpi_processes(comm) > 1)
      return false;
    for (const auto &line : cm.get_lines())
      if (!line.entries.empty() || line.inhomogeneity != 0)
        return false;
    Mat             seq = seq_block(static_cast<Mat>(jacobian));
    PetscInt        n;
    const PetscInt *ia, *ja;
    PetscBool       done;
    check(MatGetRowIJ(seq, 0, PETSC_FALSE, PETSC_FALSE, &n, &ia, &ja, &done), "MatGetRowIJ");
    if (!done || n != PetscInt(dofs.n_dofs()))
      return false;
    const unsigned dpc = fe.n_dofs_per_cell();
    std::vector<PetscInt> pos(tria.n_active_cells() * dpc * dpc, -1);
    bool complete = true;
    for (std::size_t c = 0; c < tria.n_active_cells() && complete; ++c)
      {
        const types::global_dof_index *idx = &cell_cache.dofs[c * dpc];
        for (unsigned i = 0; i < dpc; ++i)
          for (unsigned j = 0; j < dpc; ++j)
            {
              const bool row_fixed = cm.is_constrained(idx[i]);
              if ((row_fixed && i != j) || (!row_fixed && cm.is_constrained(idx[j])))
                continue;
              const PetscInt *first = ja + ia[idx[i]], *last = ja + ia[idx[i] + 1];
              const PetscInt *at    = std::lower_bound(first, last, PetscInt(idx[j]));
              if (at == last || *at != PetscInt(idx[j]))
                {
                  complete = false;
                  break;
                }
              pos[(c * dpc + i) * dpc + j] = at - ja;
            }
      }
    check(MatRestoreRowIJ(seq, 0, PETSC_FALSE, PETSC_FALSE, &n, &ia, &ja, &done), "MatRestoreRowIJ");
    if (complete)
      csr_position = std::move(pos);
    return complete;
  }

  void
  DriftDiffusionSolver::add_cell_direct(const std::size_t c, const FullMatrix<double> *A, const Vector<double> &F,
                                        PetscScalar *values, PetscScalar *r) const
  {
    const unsigned                 dpc = F.size();
    const types::global_dof_index *idx = &cell_cache.dofs[c * dpc];
    const PetscInt                *pos = &csr_position[c * dpc * dpc];
    const AffineConstraints<double> &cm = *csr_for;
    bool any_fixed = false;
    for (unsigned i = 0; i < dpc; ++i)
      {
        if (cm.is_constrained(idx[i]))
          {
            any_fixed = true;
            continue;
          }
        r[idx[i]] += F(i);
        if (A)
          for (unsigned j = 0; j < dpc; ++j)
            if (pos[i * dpc + j] >= 0)
              values[pos[i * dpc + j]] += (*A)(i, j);
      }
    if (!A || !any_fixed)
      return;
    // As AffineConstraints::distribute_local_to_global sets the diagonal of
    // a constrained row.
    double mean = 0;
    for (unsigned i = 0; i < dpc; ++i)
      mean += std::abs((*A)(i, i));
    mean /= dpc;
    if (mean == 0)
      {
        mean = A->l1_norm() / dpc;
        if (mean == 0)
          mean = 1;
      }
    for (unsigned i = 0; i < dpc; ++i)
      if (cm.is_constrained(idx[i]))
        values[pos[i * dpc + i]] += (*A)(i, i) != 0 ? std::abs((*A)(i, i)) : mean;
  }

  void
  DriftDiffusionSolver::assemble_system(const Vector<double> &u, const double light) const
  {
    const unsigned     dpc = fe.n_dofs_per_cell();
    FullMatrix<double> A(dpc, dpc);
    Vector<double>     F(dpc);
    std::vector<types::global_dof_index> idx(dpc);
    const auto t0 = std::chrono::steady_clock::now();
    jacobian = 0;
    rhs      = 0;
    if (direct_assembly())
      {
        Mat          seq = seq_block(static_cast<Mat>(jacobian));
        PetscScalar *values, *r;
        check(MatSeqAIJGetArray(seq, &values), "MatSeqAIJGetArray");
        check(VecGetArray(static_cast<const Vec &>(rhs), &r), "VecGetArray");
        for (const auto &cell : dofs.active_cell_iterators())
          {
            assemble_cell(cell, u, light, &A, F, true);
            add_cell_direct(cell->active_cell_index(), &A, F, values, r);
          }
        check(VecRestoreArray(static_cast<const Vec &>(rhs), &r), "VecRestoreArray");
        check(MatSeqAIJRestoreArray(seq, &values), "MatSeqAIJRestoreArray");
      }
    else
      {
        for (const auto &cell : dofs.active_cell_iterators())
          {
            if (!cell->is_locally_owned())
              continue;
            assemble_cell(cell, u, light, &A, F, true);
            cell->get_dof_indices(idx);
            constraints().distribute_local_to_global(A, F, idx, jacobian, rhs);
          }
        jacobian.compress(VectorOperation::add);
        rhs.compress(VectorOperation::add);
      }

    // Row scaling: the continuity rows carry the carrier densities and span
    // many orders of magnitude; equilibrate each row by its largest entry
    // before the direct solve.
    check(MatGetRowMaxAbs(static_cast<Mat>(jacobian), static_cast<const Vec &>(row_scale), nullptr),
          "MatGetRowMaxAbs");
    PetscInt lo, hi;
    check(VecGetOwnershipRange(static_cast<const Vec &>(row_scale), &lo, &hi), "VecGetOwnershipRange");
    PetscScalar *s;
    check(VecGetArray(static_cast<const Vec &>(row_scale), &s), "VecGetArray");
    for (PetscInt i = 0; i < hi - lo; ++i)
      s[i] = (s[i] > 0 && std::isfinite(s[i])) ? 1.0 / s[i] : 1.0;
    check(VecRestoreArray(static_cast<const Vec &>(row_scale), &s), "VecRestoreArray");
    check(MatDiagonalScale(static_cast<Mat>(jacobian), static_cast<const Vec &>(row_scale), nullptr),
          "MatDiagonalScale");
    check(VecPointwiseMult(static_cast<const Vec &>(rhs), static_cast<const Vec &>(row_scale),
                           static_cast<const Vec &>(rhs)),
          "VecPointwiseMult");
    // The next solve factorises the new matrix.
    factors_valid    = false;
    jacobian_norm[0] = jacobian_norm[1] = -1;
    t_assembly += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  }

  void
  DriftDiffusionSolver::assemble_scaled_residual(const Vector<double> &u, const double light) const
  {
    const unsigned dpc = fe.n_dofs_per_cell();
    Vector<double> F(dpc);
    std::vector<types::global_dof_index> idx(dpc);
    const auto t0 = std::chrono::steady_clock::now();
    rhs = 0;
    if (direct_assembly())
      {
        PetscScalar *r;
        check(VecGetArray(static_cast<const Vec &>(rhs), &r), "VecGetArray");
        for (const auto &cell : dofs.active_cell_iterators())
          {
            assemble_cell(cell, u, light, nullptr, F, true);
            add_cell_direct(cell->active_cell_index(), nullptr, F, nullptr, r);
          }
        check(VecRestoreArray(static_cast<const Vec &>(rhs), &r), "VecRestoreArray");
      }
    else
      {
        for (const auto &cell : dofs.active_cell_iterators())
          {
            if (!cell->is_locally_owned())
              continue;
            assemble_cell(cell, u, light, nullptr, F, true);
            cell->get_dof_indices(idx);
            constraints().distribute_local_to_global(F, idx, rhs);
          }
        rhs.compress(VectorOperation::add);
      }
    check(VecPointwiseMult(static_cast<const Vec &>(rhs), static_cast<const Vec &>(row_scale),
                           static_cast<const Vec &>(rhs)),
          "VecPointwiseMult");
    ++n_residuals;
    t_assembly += std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  }

  void
  DriftDiffusionSolver::assemble_residual(const Vector<double> &u, const double light,
                                          Vector<double> &r) const
  {
    const unsigned dpc = fe.n_dofs_per_cell();
    Vector<double> F(dpc);
    std::vector<types::global_dof_index> idx(dpc);
    r.reinit(dofs.n_dofs());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        assemble_cell(cell, u, light, nullptr, F, false);
        cell->get_dof_indices(idx);
        for (unsigned i = 0; i < dpc; ++i)
          r[idx[i]] += F(i);
      }
  }

  NewtonReport
  DriftDiffusionSolver::newton(Vector<double> &u, const double light, const bool reuse,
                               const unsigned max_iterations, const bool give_up_on_growth,
                               const bool potential_only) const
  {
    // A chord step solves with the factorisation of an earlier Jacobian
    // (of this solve or of the last converged state) and costs one residual
    // and one back-substitution instead of an assembly and a factorisation;
    // the chord steps of one factorisation are Anderson-mixed.
    // It is kept while the updates contract by at least `chord_contraction`
    // per step; a slower or growing update brings a fresh Jacobian (and a
    // growing one is undone first). Converged means the same in both: the
    // largest update below the tolerance, and with a contraction rate below
    // 1/4 the distance to the solution is at most a third of that update;
    // or, once two successive updates are small, the distance their rate
    // bounds below a third of the tolerance (fem/newton_rules.h; measured
    // on the twelve gaps of both shipped cases: 7 % fewer steps). Time
    // steps keep the plain test: the ion number is conserved only to the
    // residual left, and with the rate test a hysteresis scan's drift rose
    // from below 1e-10 to 1.5e-10 of the ion number.
    constexpr double chord_contraction = 0.25;
    // Chord steps of one factorisation are mixed over the last four
    // (fem/anderson.h). Measured on the short-film case at 50 um: 160
    // factorisations per solve against 171 without (the dark J-V 59 against
    // 69); depths 2 and 6 gave the same counts within a few.
    constexpr unsigned anderson_depth = 4;
    const auto       start             = std::chrono::steady_clock::now();
    NewtonReport     report;
    PETScWrappers::MPI::Vector delta_p(owned, comm);
    // The last accepted update; a first chord step must stay below the
    // update limit, where Newton's model is trusted.
    double previous = numerics.max_update;
    bool   fresh    = !reuse || !factors_valid;
    AndersonMixing mixing(anderson_depth);
    for (unsigned it = 0; it < max_iterations; ++it)
      {
        const bool chord = !fresh;
        if (chord)
          assemble_scaled_residual(u, light);
        else
          {
            assemble_system(u, light);
            report.factorisations += !potential_only;
          }
        bool ok;
        if (potential_only)
          {
            // Only the psi block is factorised; the full Jacobian's factors
            // are those of an earlier matrix, or none.
            ok = lu_solve_potential(static_cast<const Vec &>(rhs), static_cast<const Vec &>(delta_p));
          }
        else
          {
            ok            = lu_solve(static_cast<const Vec &>(rhs), static_cast<const Vec &>(delta_p), false);
            factors_valid = ok;
          }
        // The update, complete on every process.
        Vector<double> delta = complete(delta_p);
        constraints().distribute(delta);

        double   worst  = 0;
        unsigned where  = 0;
        bool     finite = ok;
        for (unsigned i = 0; i < delta.size(); ++i)
          {
            if (!std::isfinite(delta[i]))
              finite = false;
            if (std::abs(delta[i]) > worst)
              worst = std::abs(delta[i]), where = i;
          }
        report.iterations = it + 1;
        report.chord_steps += chord;
        if (chord && (!finite || !(worst < previous)))
          {
            // The old factorisation does not contract here: take this
            // iterate again with a fresh Jacobian.
            fresh = true;
            continue;
          }
        report.update_history.push_back(finite ? worst : std::numeric_limits<double>::infinity());
        if (!finite)
          break;
        report.worst_x = support_points[where][0];
        report.worst_y = support_points[where][1];
        // A start from a predicted guess that is outside Newton's region
        // of convergence: its caller starts again from the last state.
        if (give_up_on_growth && worst > std::max(numerics.max_update, report.update_history.front()))
          break;
        const std::size_t nh = report.update_history.size();
        if (worst < numerics.tolerance ||
            (!transient && nh >= 2 && converged_by_rate(report.update_history[nh - 2], worst, numerics.tolerance)))
          {
            for (unsigned i = 0; i < delta.size(); ++i)
              u[i] -= std::clamp(delta[i], -numerics.max_update, numerics.max_update);
            report.converged = true;
            break;
          }
        // The step: Newton's or the chord's update, or with earlier chord
        // steps of this factorisation their Anderson mixing.
        delta *= -1.0;
        if (chord && !mixing.empty())
          mixing.add(u, delta);
        else
          mixing.restart(u, delta);
        const Vector<double> &step = mixing.step();
        // Limit each potential's change to a few kT/q (update limiting), or
        // to the logarithm of a huge update (fem/newton_rules.h). Measured
        // on the shipped cases: the first light level of the ramp, whose
        // minority quasi-Fermi level next to a contact moves by about
        // 36 kT/q, in 11 steps and 4 factorisations instead of 22 and 12.
        for (unsigned i = 0; i < step.size(); ++i)
          u[i] += limited_update(step[i], numerics.max_update);
        // Chord steps next while a fresh Jacobian's step was small enough to
        // be in Newton's region, or while chord steps contract fast.
        fresh    = !reuse || (chord ? worst > chord_contraction * previous : worst > numerics.max_update);
        previous = worst;
      }
    report.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    return report;
  }

  void
  DriftDiffusionSolver::solve_transposed(const Vector<double> &b, Vector<double> &z) const
  {
    // The factorised matrix is the row-scaled Jacobian S J, so
    // J^T z = b is (S J)^T y = b with z = S y. The Jacobian is that of the
    // state itself (the factors of the last Newton step belong to the
    // iterate before it, or to an earlier state after chord steps); the
    // next Newton solve may start from these factors.
    assemble_system(solution, light_factor);
    PETScWrappers::MPI::Vector b_p(owned, comm), y_p(owned, comm);
    for (const auto i : owned)
      b_p[i] = b[i];
    b_p.compress(VectorOperation::insert);
    factors_valid = lu_solve(static_cast<const Vec &>(b_p), static_cast<const Vec &>(y_p), true);
    if (!factors_valid)
      throw std::runtime_error("the transposed Jacobian could not be factorised");
    check(VecPointwiseMult(static_cast<const Vec &>(y_p), static_cast<const Vec &>(row_scale),
                           static_cast<const Vec &>(y_p)),
          "VecPointwiseMult");
    z = complete(y_p);
  }

  std::vector<double>
  DriftDiffusionSolver::electron_collection_weights() const
  {
    // Electron particle current out of both contacts = sum of the electron
    // rows of F at both contacts' nodes (see terminal_current()).
    std::vector<double> w(dofs.n_dofs(), 0.0);
    for (const auto i : hole_contact_dofs[c_phin])
      w[i] = -1.0;
    for (const auto i : electron_contact_dofs[c_phin])
      w[i] = -1.0;
    return w;
  }

  Vector<double>
  DriftDiffusionSolver::collection_probability(const std::vector<double> *weights) const
  {
    // The functional I(u, G) = sum_i w_i (-F_i(u, G)) with F the residual
    // without contact terms. At a solution of the full residual R(u, G) = 0,
    // dI/dG = dI/dG|_u - lambda^T dR/dG with J^T lambda = (dI/du)^T.
    std::vector<double> w(dofs.n_dofs(), 0.0);
    if (weights)
      w = *weights;
    else
      for (const unsigned c : {c_phin, c_phip})
        for (const auto i : hole_contact_dofs[c])
          w[i] = 1.0;

    const unsigned     dpc = fe.n_dofs_per_cell();
    FullMatrix<double> A(dpc, dpc);
    Vector<double>     F(dpc), b(dofs.n_dofs());
    std::vector<types::global_dof_index> idx(dpc);
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        assemble_cell(cell, solution, light_factor, &A, F, false);
        cell->get_dof_indices(idx);
        for (unsigned i = 0; i < dpc; ++i)
          if (w[idx[i]] != 0)
            for (unsigned j = 0; j < dpc; ++j)
              b[idx[j]] -= w[idx[i]] * A(i, j);
      }
    {
      const Vector<double> local = b;
      Utilities::MPI::sum(ArrayView<const double>(local.begin(), local.size()), comm,
                          ArrayView<double>(b.begin(), b.size()));
    }
    // Prescribed values do not change with G.
    for (types::global_dof_index i = 0; i < b.size(); ++i)
      if (constraints().is_constrained(i))
        b[i] = 0;
    Vector<double> lambda;
    solve_transposed(b, lambda);

    // dR/dG: +phi_i in the electron rows, -phi_i in the hole rows; the
    // explicit dI/dG|_u has the same form with -w_i.
    Vector<double> fc(dofs.n_dofs());
    for (const auto &cell : dofs.active_cell_iterators())
      {
        cell->get_dof_indices(idx);
        for (unsigned v = 0; v < 4; ++v)
          {
            const auto in = idx[fe.component_to_system_index(c_phin, v)];
            const auto ip = idx[fe.component_to_system_index(c_phip, v)];
            const auto i0 = idx[fe.component_to_system_index(c_psi, v)];
            const double an = -w[in] - (constraints().is_constrained(in) ? 0.0 : lambda[in]);
            const double ap = w[ip] + (constraints().is_constrained(ip) ? 0.0 : lambda[ip]);
            fc[in] = an;
            fc[ip] = ap;
            fc[i0] = an + ap;
          }
      }
    return fc;
  }

  double
  DriftDiffusionSolver::collected_current(const Vector<double> &fc, const double x_min_um,
                                          const double x_max_um) const
  {
    FEValues<2> &fv = *fe_values;
    const unsigned nq = cell_quadrature.size();
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    double total = 0;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        const double x = cell->center()[0]; // um: the mesh is in um (L0 = 1 um)
        if (x < x_min_um || x > x_max_um)
          continue;
        fv.reinit(cell);
        cell->get_dof_indices(idx);
        for (unsigned q = 0; q < nq; ++q)
          {
            double f = 0;
            for (unsigned i = 0; i < idx.size(); ++i)
              if (fe.system_to_component_index(i).first == c_psi)
                f += fc[idx[i]] * fv.shape_value(i, q);
            total += light_factor * generation_qp[cell->active_cell_index() * nq + q] * f * fv.JxW(q);
          }
      }
    return Utilities::MPI::sum(total, comm) * device.scaling.J0 / width;
  }

  std::vector<DriftDiffusionSolver::CollectionPoint>
  DriftDiffusionSolver::collection_points(const Vector<double> &fc) const
  {
    FEValues<2> fv(fe, cell_quadrature, update_values | update_quadrature_points | update_JxW_values);
    std::vector<types::global_dof_index> idx(fe.n_dofs_per_cell());
    std::vector<CollectionPoint>         points;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned() || !device.region(cell->material_id()).absorber)
          continue;
        fv.reinit(cell);
        cell->get_dof_indices(idx);
        for (unsigned q = 0; q < cell_quadrature.size(); ++q)
          {
            double f = 0;
            for (unsigned i = 0; i < idx.size(); ++i)
              if (fe.system_to_component_index(i).first == c_psi)
                f += fc[idx[i]] * fv.shape_value(i, q);
            // The mesh is in um (L0 = 1 um).
            points.push_back({fv.quadrature_point(q)[0], fv.quadrature_point(q)[1], f * fv.JxW(q)});
          }
      }
    return points;
  }

  void
  DriftDiffusionSolver::adopt_equilibrium(const dealii::Vector<double> &state)
  {
    AssertThrow(state.size() == solution.size(), ExcMessage("an equilibrium of another mesh"));
    equilibrium = state;
  }

  NewtonReport
  DriftDiffusionSolver::solve_equilibrium()
  {
    // Equilibrium depends on the device alone: a second call (the dark J-V
    // after the light one) takes the state of the first.
    if (equilibrium.size() > 0)
      {
        solution     = equilibrium;
        bias         = 0;
        light_factor = 0;
        NewtonReport rep;
        rep.converged = true;
        return rep;
      }
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
    // Mobile ions: uniform at their mean density in the neutral guess.
    if (has_ions())
      {
        double area = 0;
        for (const auto &cell : dofs.active_cell_iterators())
          if (cell->is_locally_owned())
            if (const ScaledRegion &r = device.region(cell->material_id()); r.ion_density > 0)
              for (unsigned q = 0; q < cell_quadrature.size(); ++q)
                area += r.ion_density * device.scaling.N0 *
                        cell_cache.jxw[cell->active_cell_index() * cell_quadrature.size() + q];
        uniform_ion_potential(solution, Utilities::MPI::sum(area, comm));
      }
    Vector<double> u = solution;
    if (has_ions())
      ion_scale = 1e-8;
    NewtonReport rep;
    // Without mobile ions the quasi-Fermi levels stay at zero and Newton
    // needs only the psi block (lu_solve_potential): 12 steps on the
    // short-film case at 50 um, as with the full system, and the start
    // (equilibrium and light ramp) in 22 factorisations of the full
    // Jacobian instead of 33. The full system then takes one more step from
    // that state (its update below the tolerance), so the result is the full
    // system's, checked by its own test. With MUMPS only (the block is a
    // parallel matrix).
    if (!has_ions() && lu_package == MATSOLVERMUMPS)
      {
        Vector<double>     w         = u;
        const NewtonReport potential = newton(w, 0.0, false, numerics.max_iterations, false, true);
        if (potential.converged)
          {
            rep = newton(w, 0.0, false, numerics.max_iterations);
            rep.iterations += potential.iterations;
            if (rep.converged)
              u = w;
          }
      }
    if (!rep.converged)
      rep = newton(u, 0.0, false, numerics.max_iterations);
    // Mobile ions: their density raised from 1e-8 of its value (the start
    // above) in decades (a geometric midpoint when a level fails), each
    // level from the one before, with phi_c as it was (c scales with the
    // density): the ion layers at the contacts, exp(band bending / kT)
    // denser than the bulk, are far from a neutral start.
    if (has_ions() && rep.converged)
      {
        std::vector<double> levels;
        for (int e = 0; e >= -7; --e)
          levels.push_back(std::pow(10.0, e));
        double   reached = ion_scale;
        unsigned depth   = 0;
        while (!levels.empty() && rep.converged)
          {
            ion_scale            = levels.back();
            Vector<double>     w = u;
            const NewtonReport r = newton(w, 0.0, false, numerics.max_iterations);
            rep.iterations += r.iterations;
            rep.factorisations += r.factorisations;
            if (r.converged)
              {
                u       = w;
                reached = levels.back();
                levels.pop_back();
                depth = 0;
              }
            else if (depth++ < numerics.max_halvings)
              levels.push_back(std::sqrt(reached * levels.back()));
            else
              rep = r;
          }
      }
    ion_scale = 1;
    if (rep.converged)
      {
        equilibrium  = u;
        solution     = u;
        bias         = 0;
        light_factor = 0;
      }
    return rep;
  }

  NewtonReport
  DriftDiffusionSolver::solve(const double voltage, const double light, const unsigned iteration_budget)
  {
    if (transient)
      return solve_instantaneous(voltage, light);
    return recycling ? solve_with_recycling(voltage, light, iteration_budget)
                     : solve_fixed_generation(voltage, light, iteration_budget);
  }

  NewtonReport
  DriftDiffusionSolver::solve_fixed_generation(const double voltage, const double light,
                                               const unsigned iteration_budget)
  {
    Vector<double> u = solution;
    set_boundary_values(u, voltage);
    const unsigned cap =
      iteration_budget > 0 ? std::min(iteration_budget, numerics.max_iterations) : numerics.max_iterations;
    NewtonReport rep = newton(u, light, numerics.reuse_factorisations, cap, iteration_budget > 0);
    if (!rep.converged && rep.chord_steps > 0 && iteration_budget == 0)
      {
        // Chord steps can stall where full Newton steps still converge:
        // try again from the same start with a fresh Jacobian every step
        // (unless the attempt took none, and so was plain Newton already).
        u = solution;
        set_boundary_values(u, voltage);
        NewtonReport full = newton(u, light, false, numerics.max_iterations);
        full.chord_attempt_iterations = rep.iterations;
        full.iterations += rep.iterations;
        full.factorisations += rep.factorisations;
        full.seconds += rep.seconds;
        rep = full;
      }
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
    // In a transient the time step that led to u is not known here: the
    // next solve is a new step or an instantaneous change.
    ion_step = 0;
    // A stored state was converged with the generation it re-emits.
    if (recycling)
      set_recycled(outer_part(u));
  }

  TerminalCurrent
  DriftDiffusionSolver::terminal_current() const
  {
    // Consistent flux: the residual of the continuity equations without the
    // contact terms, summed over the contact's nodes, is minus the current
    // through the contact.
    Vector<double> r;
    assemble_residual(solution, light_factor, r);
    const auto      n = contact_sums(r, c_phin), p = contact_sums(r, c_phip);
    const double    J0 = device.scaling.J0 / width;
    TerminalCurrent t;
    t.electron                  = -n[0] * J0;
    t.hole                      = -p[0] * J0;
    t.electron_contact_electron = n[1] * J0;
    t.electron_contact_hole     = p[1] * J0;
    if (transient && ion_step > 0)
      {
        // Displacement current out of the film into each contact, minus the
        // rate of change of the Poisson rows' sum there (BDF, as the storage
        // terms): exactly what makes the total current the same at both.
        const auto S                    = contact_sums(r, c_psi);
        t.displacement                  = -(ion_beta * S[0] - field_flux_history[0]) / ion_step * J0;
        t.electron_contact_displacement = (ion_beta * S[1] - field_flux_history[1]) / ion_step * J0;
      }
    return t;
  }

  std::array<double, 2>
  DriftDiffusionSolver::contact_sums(const Vector<double> &r, const unsigned c) const
  {
    auto sum = [&](const std::vector<types::global_dof_index> &d) {
      double s = 0;
      for (const auto i : d)
        s += r[i];
      return Utilities::MPI::sum(s, comm);
    };
    return {{sum(hole_contact_dofs[c]), sum(electron_contact_dofs[c])}};
  }

  double
  DriftDiffusionSolver::generation_current() const
  {
    FEValues<2>     fv(fe, cell_quadrature, update_JxW_values);
    double          total = 0;
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        fv.reinit(cell);
        for (unsigned q = 0; q < cell_quadrature.size(); ++q)
          total += light_factor * generation_qp[cell->active_cell_index() * cell_quadrature.size() + q] * fv.JxW(q);
      }
    return Utilities::MPI::sum(total, comm) * device.scaling.J0 / width;
  }
} // namespace backcomb::fem
