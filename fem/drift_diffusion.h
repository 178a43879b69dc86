// Steady-state drift-diffusion-Poisson (van Roosbroeck) solver on the period
// or strip mesh, in the quasi-Fermi-potential formulation (psi, phi_n, phi_p)
// with Q1 elements, Newton's method with update limiting and row scaling.
// Densities n = exp(psi - phi_n + a_n), p = exp(phi_p - psi + a_p) are
// positive by construction over any number of orders of magnitude.
#pragma once

#include "fem/device.h"

#include <deal.II/dofs/dof_handler.h>
#include <deal.II/fe/fe_system.h>
#include <deal.II/grid/tria.h>
#include <deal.II/lac/affine_constraints.h>
#include <deal.II/lac/sparse_matrix.h>
#include <deal.II/lac/sparsity_pattern.h>
#include <deal.II/lac/vector.h>

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
  };

  // Terminal currents at the hole contact, generator convention: positive
  // when the cell delivers power (light, short circuit). mA/cm^2 of the
  // mesh width (the period footprint); per unit length along the fingers
  // multiply by the width.
  struct TerminalCurrent
  {
    double electron = 0; // J_n part through the hole contact
    double hole     = 0; // J_p part
    double total() const { return electron + hole; }
    // The same through the electron contact, sign flipped so that in steady
    // state electron_contact_electron + electron_contact_hole = total().
    double electron_contact_electron = 0;
    double electron_contact_hole     = 0;
  };

  class DriftDiffusionSolver
  {
  public:
    DriftDiffusionSolver(const dealii::Triangulation<2> &tria,
                         const DeviceModel &device,
                         const NumericsParameters &numerics);

    // Sets the initial guess (local charge neutrality, flat quasi-Fermi
    // levels) and solves thermal equilibrium in the dark at zero bias.
    NewtonReport solve_equilibrium();

    // Solves at hole-contact voltage V (volts, electron contact grounded)
    // and light factor s (generation scaled by s), starting from the
    // current state. Does not change the state if Newton fails.
    NewtonReport solve(double voltage, double light_factor);

    TerminalCurrent terminal_current() const;

    // Integrals over the domain, per footprint width, in mA/cm^2 as q*rate:
    // total generation and total recombination (bulk + surfaces + contacts
    // for minority carriers).
    double generation_current() const;

    double voltage() const { return bias; }
    double light() const { return light_factor; }
    double width_um() const { return width; }

    // Nodal fields (for output and post-processing).
    const dealii::DoFHandler<2> &dof_handler() const { return dofs; }
    const dealii::Vector<double> &state() const { return solution; }
    void set_state(const dealii::Vector<double> &u, double voltage, double light);
    const DeviceModel &device_model() const { return device; }

    // Writes ψ, quasi-Fermi levels, n, p, currents, G and R (VTK XML .vtu).
    void write_fields(const std::string &vtu_file) const;

    unsigned n_dofs() const { return dofs.n_dofs(); }

  private:
    void setup_system();
    void precompute_generation();
    void set_boundary_values(dealii::Vector<double> &u, double voltage) const;
    // Assembles the Jacobian (if matrix) and residual. Contact flux terms
    // are left out when `with_contacts` is false (terminal currents).
    void assemble(const dealii::Vector<double> &u,
                  double light,
                  dealii::SparseMatrix<double> *matrix,
                  dealii::Vector<double> &residual,
                  bool with_contacts,
                  bool apply_constraints) const;
    NewtonReport newton(dealii::Vector<double> &u, double light) const;

    const dealii::Triangulation<2> &tria;
    const DeviceModel               &device;
    NumericsParameters               numerics;

    dealii::FESystem<2>              fe;
    dealii::DoFHandler<2>            dofs;
    dealii::AffineConstraints<double> zero_constraints; // Dirichlet DoFs of the update
    dealii::SparsityPattern          sparsity;
    mutable dealii::SparseMatrix<double> jacobian;
    dealii::Vector<double>           solution;
    std::vector<double>              generation_qp; // scaled, per cell and quadrature point
    std::vector<dealii::types::global_dof_index> hole_contact_dofs[3], electron_contact_dofs[3];
    std::vector<dealii::Point<2>>    support_points;
    double                           bias = 0, light_factor = 0, width = 0;
  };
} // namespace backcomb::fem
