// Steady-state drift-diffusion-Poisson (van Roosbroeck) solver on the period
// or strip mesh, in the quasi-Fermi-potential formulation (psi, phi_n, phi_p)
// with Q1 elements, Newton's method with update limiting and row scaling.
// Linear algebra: PETSc (through deal.II's wrappers) with the MUMPS direct
// solver. On a parallel::shared::Triangulation every process assembles its
// own cells and MUMPS factorises the distributed Jacobian; the nodal state
// itself is small and kept complete on every process.
// Densities n = exp(psi - phi_n + a_n), p = exp(phi_p - psi + a_p) are
// positive by construction over any number of orders of magnitude.
#pragma once

#include "fem/device.h"

#include <deal.II/dofs/dof_handler.h>
#include <deal.II/fe/fe_system.h>
#include <deal.II/fe/fe_values.h>
#include <deal.II/grid/tria.h>
#include <deal.II/base/index_set.h>
#include <deal.II/lac/affine_constraints.h>
#include <deal.II/lac/full_matrix.h>
#include <deal.II/lac/petsc_sparse_matrix.h>
#include <deal.II/lac/petsc_vector.h>
#include <deal.II/lac/vector.h>

#include <deal.II/base/quadrature_lib.h>

#include <mpi.h>
#include <petscksp.h>

#include <array>
#include <cmath>
#include <functional>
#include <map>
#include <memory>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // What happened in one Newton solve.
  struct NewtonReport
  {
    bool                converged  = false;
    unsigned            iterations = 0;
    std::vector<double> update_history; // max |update| per step, kT/q
    double              worst_x = 0, worst_y = 0; // where the last update was largest, um
    double              seconds = 0;
    unsigned            factorisations = 0; // Jacobians assembled and factorised
    unsigned            chord_steps    = 0; // steps with an earlier factorisation
    // Steps of a first attempt that reused factorisations and did not
    // converge (included in `iterations`; the history is the last attempt's).
    unsigned            chord_attempt_iterations = 0;
  };

  // Terminal currents at the hole contact, generator convention: positive
  // when the cell delivers power (light, short circuit). mA/cm^2 of the
  // mesh width (the period footprint); per unit length along the fingers
  // multiply by the width.
  struct TerminalCurrent
  {
    double electron = 0; // J_n part through the hole contact
    double hole     = 0; // J_p part
    // Displacement current d(eps E.n)/dt into the hole contact during a time
    // step of a transient (0 in a steady state and after an instantaneous
    // change, whose displacement current is a pulse of zero duration).
    double displacement = 0;
    double total() const { return electron + hole + displacement; }
    // The same through the electron contact, sign flipped so that
    // electron_contact_electron + electron_contact_hole +
    // electron_contact_displacement = total() (total current is conserved).
    double electron_contact_electron     = 0;
    double electron_contact_hole         = 0;
    double electron_contact_displacement = 0;
  };

  // Free-energy balance of one operating point (R. Brendel,
  // S. Dreissigacker, N.-P. Harder, P. P. Altermatt, Appl. Phys. Lett. 93
  // (2008) 173503), in mW/cm^2 of the footprint. Multiplying the discrete
  // electron and hole equations by the nodal quasi-Fermi potentials and
  // adding them gives, exactly for the Galerkin solution,
  //   q int G dmu = P_out + q int R dmu + q oint U_s dmu + Joule_n + Joule_p
  //                 + contact terms,
  // with dmu = E_Fn - E_Fp the quasi-Fermi-level splitting, Joule_n =
  // int |J_n|^2 / (q mu_n n), and for selective contacts the free energy
  // that each carrier gives up crossing the contact, (E_F,carrier -
  // E_F,metal) times its particle flux. At an ohmic contact both
  // quasi-Fermi levels equal the metal's, so these terms vanish there and
  // the minority carriers' loss appears as Joule heat next to the contact.
  struct PowerBalance
  {
    double bias_V  = 0;
    double current = 0;                // mA/cm^2, generator convention
    double input   = 0;                // q int G dmu
    double band_edge_input = 0;        // q int G E_g: what dmu could be at most
    double output  = 0;                // V J
    std::map<std::string, double> bulk_recombination; // per channel, all regions
    // With photon recycling as transport: q int G_recycled dmu, the free
    // energy the re-absorbed photons bring back. The "radiative" channel
    // above is then net of it (as in the local model), so that the balance
    // closes the same way in both.
    double recycled_input = 0;
    double top_surface   = 0;          // q oint U_s dmu
    double gap_interface = 0;
    double joule_electrons = 0;        // in the absorber
    double joule_holes     = 0;
    double joule_interlayers = 0;      // both carriers, all interlayers
    // contact[k][c]: k = 0 electron contact, 1 hole contact; c = 0
    // electrons, 1 holes.
    double contact[2][2] = {{0, 0}, {0, 0}};

    double recombination() const;      // bulk + surfaces
    double joule() const { return joule_electrons + joule_holes + joule_interlayers; }
    double contacts() const { return contact[0][0] + contact[0][1] + contact[1][0] + contact[1][1]; }
    double losses() const { return recombination() + joule() + contacts(); }
    // What the terms leave unexplained: input - output - losses.
    double residual() const { return input - output - losses(); }
  };

  class DriftDiffusionSolver
  {
  public:
    // The processes taking part are those of `tria` if it is a parallel
    // triangulation, otherwise only the calling process. A second solver
    // that works in a thread of its own beside the first (the dark J-V
    // beside the light one, simulator/case_run.cc) is given a communicator
    // of its own over the same processes, `own_comm`, so that the two
    // never share a PETSc object or an MPI communicator; the
    // factorisations of packages that call BLAS take turns
    // (fem/blas_lock.h). `lu_package` is PETSc's name of the LU package:
    // MUMPS, or on one process PETSc's own LU ("petsc", which calls no BLAS
    // and so needs no turn; checked, with KLU behind it, in lu_solve) or
    // another package of PETSc's for comparisons.
    DriftDiffusionSolver(const dealii::Triangulation<2> &tria,
                         const DeviceModel &device,
                         const NumericsParameters &numerics,
                         MPI_Comm own_comm = MPI_COMM_NULL,
                         const std::string &lu_package = "mumps");

    // Sets the initial guess (local charge neutrality, flat quasi-Fermi
    // levels) and solves thermal equilibrium in the dark at zero bias; a
    // later call takes the state the first one converged to.
    ~DriftDiffusionSolver();
    DriftDiffusionSolver(const DriftDiffusionSolver &) = delete;
    DriftDiffusionSolver &operator=(const DriftDiffusionSolver &) = delete;

    NewtonReport solve_equilibrium();
    // Takes `state` as the equilibrium a later solve_equilibrium() returns
    // (the equilibrium another solver of the same device and mesh found).
    void adopt_equilibrium(const dealii::Vector<double> &state);

    // Solves at hole-contact voltage V (volts, electron contact grounded)
    // and light factor s (generation scaled by s), starting from the
    // current state. Does not change the state if Newton fails. A
    // non-zero `iteration_budget` caps the Newton iterations below
    // Numerics/Newton iterations, stops as soon as an update grows past
    // the first one and the update limit, and drops the retry with plain
    // Newton after failed chord steps: for a start from a predicted guess,
    // whose caller falls back to a start from the last converged state.
    NewtonReport solve(double voltage, double light_factor, unsigned iteration_budget = 0);

    // Photon recycling as transport (DeviceModel::recycling set): each
    // solve is then an outer fixed-point iteration, accelerated by PETSc's
    // Anderson mixing (SNESANDERSON; D. G. Anderson, J. ACM 12 (1965) 547),
    // over the re-absorbed generation per absorber column, each step a
    // drift-diffusion solve with that generation fixed, until the
    // generation the state re-emits equals the one it was solved with to
    // `recycling_tolerance` of the largest column generation.
    bool transports_photons() const { return recycling != nullptr; }
    static constexpr double recycling_tolerance = 1e-8;
    // The absorber's lateral columns (um, increasing) and, for the current
    // state, the net radiative emission and the re-absorbed generation per
    // column (cm^-2 s^-1 of footprint) and where the emitted photons go.
    const std::vector<double> &column_edges_um() const { return columns.edges; }
    std::vector<double> column_emission(const dealii::Vector<double> &u) const;
    std::vector<double> recycled_generation() const;
    PhotonBalance photon_balance() const;
    // Outer iterations of the recycling so far (all solves).
    unsigned recycling_iterations() const { return n_recycling; }
    std::size_t recycling_operator_bytes() const { return recycling ? recycling->memory_bytes() : 0; }

    // Mobile ions (DeviceModel::has_ions()): a fourth unknown, the ions'
    // electrochemical potential phi_c, with ion density
    // c = N_ion exp(z (phi_c - psi)) and blocking boundaries everywhere.
    // By default every solve puts the ions in their steady state in the
    // self-consistent potential: zero ionic current (phi_c uniform over
    // the region) and their number fixed (the mean density is N_ion). In
    // a transient (begin_transient()) they follow time instead: each
    // solve_time_step() is one implicit step of the continuity equations
    // of all three species (ions, electrons, holes: their storage terms
    // dc/dt, dn/dt, dp/dt), and the terminal current includes the
    // displacement current at the contacts. A plain
    // solve() in a transient is an instantaneous change of bias or light:
    // the ions keep the distribution they had at the end of the last time
    // step (or at begin_transient()), in the L2 sense of the Q1 functions.
    bool has_ions() const { return ion_region_dofs > 0; }
    // The current state becomes the start (t = 0) of a transient.
    void begin_transient();
    // One step of length dt (s) to bias `voltage` and light factor `light`:
    // BDF1 for the first step of a transient, then the variable-step BDF2
    // (second-order backward differentiation; E. Hairer, G. Wanner,
    // Solving Ordinary Differential Equations II, 2nd ed. 1996, Sec. III.5).
    // Newton starts from `guess` if given (a predicted state), else from
    // the current state. Leaves the state unchanged if Newton fails.
    NewtonReport solve_time_step(double voltage, double light, double dt,
                                 const dealii::Vector<double> *guess = nullptr);
    // Back to steady-state ions (the next solve relaxes them).
    // (In a transient, solve() calls solve_instantaneous().)
    void end_transient();
    bool in_transient() const { return transient; }
    static constexpr unsigned time_step_iterations = 25;
    // What a time step needs besides the state: the state before it and
    // the length of the step that led to it (for restarting a rejected step).
    struct TransientHistory
    {
      dealii::Vector<double> previous;
      double                 previous_dt = 0; // s; 0: no step yet (BDF1 next)
    };
    const TransientHistory &transient_history() const { return history; }
    void set_transient_history(const TransientHistory &h) { history = h; }
    // Integral of the ion density over the ion region, cm^-3 um^2 (per unit
    // length along the fingers), and its mean density in cm^-3, both with
    // the quadrature of the assembly (in which the number is conserved).
    double ion_number(const dealii::Vector<double> &u) const;
    // Each node of the ion region once: its phi_c and psi DoFs and the
    // ions' charge number there.
    struct IonNode
    {
      dealii::types::global_dof_index ion, psi;
      double                          z;
    };
    const std::vector<IonNode> &ion_nodes() const { return ion_nodes_; }
    // c / (c + N_ion) at a node of state u, the logistic function of
    // ln(c / N_ion) = z (phi_c - psi): 1 where the ions pile up, their
    // density over N_ion where they are depleted.
    static double ion_weight(const dealii::Vector<double> &u, const IonNode &k)
    {
      const double x = k.z * (u[k.ion] - u[k.psi]);
      return x > 0 ? 1 / (1 + std::exp(-x)) : std::exp(x) / (1 + std::exp(x));
    }
    double mean_ion_density() const;

    TerminalCurrent terminal_current() const;

    // Integrals over the domain, per footprint width, in mA/cm^2 as q*rate:
    // total generation and total recombination (bulk + surfaces + contacts
    // for minority carriers).
    double generation_current() const;

    // Free-energy balance of the current state (see PowerBalance).
    PowerBalance power_balance() const;

    double voltage() const { return bias; }
    double light() const { return light_factor; }
    double width_um() const { return width; }

    // Nodal fields (for output and post-processing).
    const dealii::DoFHandler<2> &dof_handler() const { return dofs; }
    const dealii::Vector<double> &state() const { return solution; }
    void set_state(const dealii::Vector<double> &u, double voltage, double light);
    const DeviceModel &device_model() const { return device; }

    // Writes psi, quasi-Fermi levels, n, p, currents, |E|, G and R (VTK XML
    // .vtu), and the collection probability with its dead-zone mask
    // (f_c < threshold) when `fc` is given.
    void write_fields(const std::string &vtu_file,
                      const dealii::Vector<double> *fc = nullptr,
                      double threshold = 0.5) const;

    unsigned n_dofs() const { return dofs.n_dofs(); }

    // Time spent so far in assembly and in the direct solver (s), and the
    // number of Jacobians factorised and of residuals assembled.
    double assembly_seconds() const { return t_assembly; }
    double linear_solve_seconds() const { return t_solve; }
    unsigned factorisations() const { return n_factorisations; }
    // Time spent in the numerical factorisations alone (s).
    double factorisation_seconds() const { return t_factorise; }
    unsigned residual_assemblies() const { return n_residuals; }

    // Local collection probability f_c = dI/dG (per generated pair; I the
    // terminal current in generator convention) at the current state, from
    // one adjoint solve with the transposed Jacobian (generalised
    // reciprocity; C. Donolato, Appl. Phys. Lett. 46 (1985) 270 for the
    // linear case). Returned as a nodal vector of the system: component 0
    // holds f_c, components 1 and 2 its electron- and hole-equation parts.
    // `weights` (optional, one per DoF) replaces the terminal current by
    // the functional sum_i w_i (-F_i) of the contact-free residual F, e.g.
    // the electron current out of both contacts.
    dealii::Vector<double> collection_probability(const std::vector<double> *weights = nullptr) const;

    // q * integral of G f_c over the domain per footprint width, mA/cm^2:
    // equals the current when the problem is linear in G. With a range,
    // only over the cells whose centre lies in x_min_um <= x <= x_max_um.
    double collected_current(const dealii::Vector<double> &fc, double x_min_um = -1e300,
                             double x_max_um = 1e300) const;

    // The quadrature points of the absorber cells this process owns, each
    // with its position (um) and weight JxW (um^2) times f_c there; the
    // other processes hold the rest. For spectral collection (EQE).
    struct CollectionPoint
    {
      double x_um, y_um, weight;
    };
    std::vector<CollectionPoint> collection_points(const dealii::Vector<double> &fc) const;

    // The DoF weights of the electron particle current out of both
    // contacts (for collection-probability checks on strips).
    std::vector<double> electron_collection_weights() const;

    // Solves J^T z = b with the Jacobian of the current state (for the
    // adjoint collection probability). `b` and `z` are complete vectors.
    void solve_transposed(const dealii::Vector<double> &b, dealii::Vector<double> &z) const;

    MPI_Comm communicator() const { return comm; }
    // PETSc's name of the LU package in use (it changes from "petsc" to
    // "klu" where PETSc's own LU, which does not pivot, fell short).
    const std::string &lu_package_in_use() const { return lu_package; }
    // The communicator of the objects that live on each process alone
    // (the recycling's Anderson mixing): `comm` itself on one process.
    MPI_Comm serial_communicator() const;

  private:
    void setup_system();
    void cache_cell_geometry();
    void precompute_generation();
    void set_boundary_values(dealii::Vector<double> &u, double voltage) const;
    // Local Jacobian (if A) and residual of one cell, including its
    // boundary faces. Contact flux terms are left out when `with_contacts`
    // is false (terminal currents).
    template <typename CellIterator>
    void assemble_cell(const CellIterator &cell,
                       const dealii::Vector<double> &u,
                       double light,
                       dealii::FullMatrix<double> *A,
                       dealii::Vector<double> &F,
                       bool with_contacts) const;
    // Jacobian and residual of the locally owned cells, with the Dirichlet
    // rows of the Newton update, row-equilibrated; the row scale is kept
    // with the factorisation that follows.
    void assemble_system(const dealii::Vector<double> &u, double light) const;
    // The drift-diffusion solve with the recycled generation held fixed.
    NewtonReport solve_fixed_generation(double voltage, double light, unsigned iteration_budget);
    NewtonReport solve_instantaneous(double voltage, double light);
    NewtonReport solve_with_recycling(double voltage, double light, unsigned iteration_budget);
    void setup_recycling();
    // Sets the outer iteration's part of the re-absorbed generation per
    // column (cm^-2 s^-1).
    void set_recycled(const std::vector<double> &per_column);
    // Per column, the integral of a scaled rate over the column's cells
    // (owned here, summed over the processes) in cm^-2 s^-1 of footprint;
    // `rates(cell index, region, rate)` fills the rate at the cell's
    // quadrature points (left 0 where it does not apply).
    std::vector<double>
    columns_integral(const std::function<void(std::size_t, const ScaledRegion &, double *)> &rates) const;
    // K e(u) - A e(u) per column: what the outer iteration must match.
    std::vector<double> outer_part(const dealii::Vector<double> &u) const;
    // The residual alone, scaled by the rows of the last factorised
    // Jacobian (for a chord step with that factorisation).
    void assemble_scaled_residual(const dealii::Vector<double> &u, double light) const;
    // Residual without contact terms and constraints (complete vector; each
    // process holds the contributions of its own cells).
    void assemble_residual(const dealii::Vector<double> &u, double light,
                           dealii::Vector<double> &r) const;
    // The ion density (scaled) at each quadrature point of the owned ion
    // cells for state u (0 elsewhere).
    std::vector<double> ion_density_qp(const dealii::Vector<double> &u) const;
    // Electron and hole densities (scaled) at each quadrature point of the
    // owned cells for state u.
    void carrier_density_qp(const dealii::Vector<double> &u, std::vector<double> &n,
                            std::vector<double> &p) const;
    // The electric flux into the hole and the electron contact, the sums of
    // the Poisson rows of the residual over each contact's nodes (scaled,
    // per unit length; its rate of change is the displacement current).
    std::array<double, 2> contact_field_flux(const dealii::Vector<double> &u) const;
    // The rows of component c of a residual r (assemble_residual()) summed
    // over the nodes of the hole and of the electron contact, over all
    // processes.
    std::array<double, 2> contact_sums(const dealii::Vector<double> &r, unsigned c) const;
    // Sets phi_c uniform over the ion region such that the ion number
    // (ion_number()) of u is `number`, psi as it is.
    void uniform_ion_potential(dealii::Vector<double> &u, double number) const;
    // The constraints of the Newton update in the current mode.
    const dealii::AffineConstraints<double> &constraints() const
    {
      return transient ? zero_constraints : steady_constraints;
    }
    // Newton's method; with `reuse` a step may take the factorisation of an
    // earlier Jacobian (a chord step) while the updates contract fast. With
    // `give_up_on_growth` it stops, not converged, at a step whose update
    // exceeds both the update limit and the first update.
    // With `potential_only` (thermal equilibrium without mobile ions, from
    // phi_n = phi_p = 0) each step solves with the psi block alone
    // (lu_solve_potential) and every step takes a fresh Jacobian.
    NewtonReport newton(dealii::Vector<double> &u, double light, bool reuse, unsigned max_iterations,
                        bool give_up_on_growth = false, bool potential_only = false) const;
    bool lu_solve(Vec b, Vec x, bool transpose) const;
    bool lu_solve_potential(Vec b, Vec x) const;
    // All DoFs of component c on boundary b, on every process.
    std::vector<dealii::types::global_dof_index> boundary_dofs(unsigned b, unsigned c) const;

    const dealii::Triangulation<2> &tria;
    const DeviceModel               &device;
    NumericsParameters               numerics;
    MPI_Comm                         comm;

    unsigned                         n_components; // 3, or 4 with mobile ions
    dealii::FESystem<2>              fe;
    dealii::DoFHandler<2>            dofs;
    dealii::QGauss<2>                cell_quadrature;
    dealii::QGauss<1>                face_quadrature;
    // Reused by assemble_cell (the solver is used by one thread).
    std::unique_ptr<dealii::FEValues<2>>     fe_values;
    std::unique_ptr<dealii::FEFaceValues<2>> fe_face_values;
    mutable std::string              lu_package;    // PETSc's name of the LU package
    mutable KSP                      ksp = nullptr; // the LU, kept between solves
    // The psi block of the Jacobian, its rows and its LU (equilibrium).
    mutable IS                       potential_rows  = nullptr;
    mutable Mat                      potential_block = nullptr;
    mutable KSP                      potential_ksp   = nullptr;
    dealii::IndexSet                 owned, relevant;
    dealii::AffineConstraints<double> zero_constraints; // Dirichlet DoFs of the update
    // With ions in their steady state, also every ion DoF tied to one:
    // phi_c is uniform, and the condensed row of that DoF is the ion
    // number, int (c - N_ion) = 0 (no ions: the same as zero_constraints).
    dealii::AffineConstraints<double> steady_constraints;
    std::size_t                      ion_region_dofs = 0;
    std::vector<IonNode>             ion_nodes_;
    bool                             transient = false;
    TransientHistory                 history;
    // The time step being solved, as beta c - hist + dt div F = 0 for the
    // ion density c at the quadrature points: the BDF leading coefficient,
    // the step (scaled; 0 for an instantaneous change) and the history
    // part hist; and the ion density at the end of the last step, which an
    // instantaneous change keeps (ions frozen).
    double                           ion_beta = 1, ion_step = 0;
    double                           ion_scale = 1; // of the ion density (equilibrium continuation)
    std::vector<double>              ion_history_qp, frozen_ions_qp;
    // The same history parts for the electron and hole densities, and for
    // the electric flux into the two contacts (contact_field_flux()).
    std::vector<double>              electron_history_qp, hole_history_qp;
    std::array<double, 2>            field_flux_history = {{0, 0}};
    mutable dealii::PETScWrappers::MPI::SparseMatrix jacobian;
    mutable dealii::PETScWrappers::MPI::Vector       rhs;
    mutable dealii::PETScWrappers::MPI::Vector       row_scale; // of the factorised Jacobian
    mutable bool                     factors_valid = false; // the KSP holds factors of `jacobian`
    // |J| of the assembled Jacobian in the maximum norm and in the 1-norm
    // (that of J^T), for the backward error of lu_solve; < 0: not yet taken.
    mutable double jacobian_norm[2] = {-1, -1};
    // Assembly straight into the arrays of the factorised matrix and of the
    // right-hand side (direct_assembly()): for the constraints it was built
    // for, each cell's local entry (i, j) at csr_position[(cell * dpc + i) *
    // dpc + j] in the matrix's value array, -1 where the constraints drop it.
    mutable const dealii::AffineConstraints<double> *csr_for = nullptr;
    mutable std::vector<PetscInt>                     csr_position;
    bool direct_assembly() const;
    void add_cell_direct(std::size_t cell, const dealii::FullMatrix<double> *A, const dealii::Vector<double> &F,
                         PetscScalar *matrix_values, PetscScalar *rhs_values) const;
    dealii::Vector<double>           solution;
    dealii::Vector<double>           equilibrium; // once solved
    // Per-cell data of the assembly (the mesh never changes): DoF indices,
    // shape gradients and JxW at the quadrature points, and the shape
    // values of the reference cell.
    struct CellCache
    {
      std::vector<dealii::types::global_dof_index> dofs; // 4 x n_components per cell
      std::vector<double> grad;                          // [cell][q][vertex][2]
      std::vector<double> jxw;                           // [cell][q]
      // Edge weights -K_ij of the Q1 stiffness with the vertex rule, per
      // cell and vertex pair (edge_pairs), for the exponentially fitted
      // carrier fluxes (empty with Galerkin fluxes).
      std::vector<double> edge_w;                        // [cell][6]
      double              phi[64][4];                    // [q][vertex]
      unsigned            component[16], vertex[16];     // of each system DoF
    } cell_cache;
    std::vector<double>              generation_qp; // scaled, per cell and quadrature point
    std::vector<double>              fixed_charge_qp; // scaled, empty if none
    // Photon recycling as transport; `recycled_qp` (scaled, per cell and
    // quadrature point) is empty without it.
    std::unique_ptr<const RecyclingOperator> recycling;
    struct Columns
    {
      std::vector<double> edges, thickness_um; // per column
      std::vector<int>    of_cell;             // per active cell, -1 outside the absorber
      // The outer iteration's part of the re-absorbed generation,
      // K e - A e (cm^-2 s^-1, per column); A e is in Newton's equations.
      std::vector<double> recycled;
      double              local_share = 0; // A
      // The radiative channel of each material id (nullptr: none).
      std::vector<const RecombinationChannel *> radiative;
    } columns;
    std::vector<double>              recycled_qp;
    unsigned                         n_recycling = 0;
    std::vector<dealii::types::global_dof_index> hole_contact_dofs[3], electron_contact_dofs[3];
    std::vector<dealii::Point<2>>    support_points;
    double                           bias = 0, light_factor = 0, width = 0;
    mutable double                   t_assembly = 0, t_solve = 0, t_factorise = 0;
    mutable unsigned                 n_factorisations = 0, n_residuals = 0;
  };
} // namespace backcomb::fem
