// The same device solved on one process and on all processes of
// MPI_COMM_WORLD (parallel::shared::Triangulation, PETSc + MUMPS) must give
// the same currents: run with `mpirun -np 2`.
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "tests/strip_mesh.h"

#include <deal.II/base/mpi.h>
#include <deal.II/distributed/shared_tria.h>

#include <gtest/gtest.h>

#include <cmath>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;

namespace
{
  // A lit p-n junction strip at forward bias: every physics term of the
  // bulk is active; the numbers are arbitrary test values.
  // The current and the power balance's Joule and SRH terms.
  struct Result
  {
    double J, joule, srh, residual;
  };

  Result
  current(dealii::Triangulation<2> &tria, const unsigned processes_expected)
  {
    test_support::make_strip(tria, 8.0, 1.0, 4.0, 0.005, 1.2, 0.5);
    Material p, n;
    p.acceptors = 1e17;
    n.donors    = 1e17;
    p.B_rad = n.B_rad = 1e-10;
    p.tau_n = p.tau_p = n.tau_n = n.tau_p = 1e-8;
    ContactParameters left, right;
    left.model = right.model = "ohmic";
    left.work_function  = n.electron_affinity + 0.05;
    right.work_function = p.electron_affinity + p.band_gap - 0.05;
    DeviceModel dev(300, {{ids::absorber, n}, {ids::absorber_right, p}},
                    {ids::absorber, ids::absorber_right}, left, right, SurfaceParameters(),
                    SurfaceParameters(), [](double x, double) { return 1e21 * (1 + 0.1 * x); });
    NumericsParameters num;
    num.tolerance = 1e-10;
    DriftDiffusionSolver solver(tria, dev, num);
    EXPECT_EQ(dealii::Utilities::MPI::n_mpi_processes(solver.communicator()), processes_expected);
    EXPECT_TRUE(illuminate(solver, 1.0, 8).converged);
    EXPECT_TRUE(move_to(solver, 0.6, 1.0, 8).converged);
    const PowerBalance b = solver.power_balance();
    return {solver.terminal_current().total(), b.joule(), b.bulk_recombination.at("srh"), b.residual()};
  }
} // namespace

TEST(Parallel, SameCurrentOnOneAndOnAllProcesses)
{
  dealii::Triangulation<2> serial;
  const Result             r1 = current(serial, 1);
  const double             J1 = r1.J;
  dealii::parallel::shared::Triangulation<2> shared(MPI_COMM_WORLD);
  const unsigned np = dealii::Utilities::MPI::n_mpi_processes(MPI_COMM_WORLD);
  const Result   r2 = current(shared, np);
  const double   J2 = r2.J;
  // Every process owns a part of the mesh.
  EXPECT_GT(shared.n_locally_owned_active_cells(), 0u);
  std::printf("processes %u: J = %.12e mA/cm2 (one process %.12e)\n", np, J2, J1);
  // Identical up to the round-off of a different summation order.
  EXPECT_NEAR(J2 / J1, 1.0, 1e-8);
  // The power balance sums over the processes' cells.
  std::printf("Joule %.12e / %.12e, SRH %.12e / %.12e mW/cm2, residual %.2e\n", r2.joule, r1.joule, r2.srh,
              r1.srh, r2.residual);
  EXPECT_NEAR(r2.joule / r1.joule, 1.0, 1e-8);
  EXPECT_NEAR(r2.srh / r1.srh, 1.0, 1e-8);
  EXPECT_LT(std::abs(r2.residual), 1e-8 * r2.srh);
}
