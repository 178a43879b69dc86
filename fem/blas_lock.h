// One turn at a time for the dense linear algebra of the process (BLAS and
// LAPACK, and MUMPS, which calls them): taken around every factorisation and
// triangular solve of a package that calls BLAS
// (DriftDiffusionSolver::lu_solve) and every small dense solve
// (AndersonMixing). The dark J-V may run in a thread of its own beside the
// light J-V (simulator/case_run.cc), and the sequential build of OpenBLAS
// that Debian installs by default shares one workspace among all callers
// (it is thread-safe only when built with USE_LOCKING=1): two
// factorisations at once (MUMPS and UMFPACK) gave Newton runs that changed
// from one run to the next here, and MUMPS in two threads at once crashed
// in its analysis. The dark J-V's solver therefore factorises with PETSc's
// own LU, which calls no BLAS, and needs a turn only for its Anderson
// mixing. (Vector operations of PETSc call level-1 BLAS, which keeps no
// workspace: five threaded runs give the same results bit for bit,
// tests/threaded_dark_cli.sh.)
#pragma once

#include <mutex>

namespace backcomb::fem
{
  // Held while alive; one holder at a time in the process.
  class BlasTurn
  {
  public:
    BlasTurn()
      : hold(mutex())
    {}

  private:
    static std::mutex &
    mutex()
    {
      static std::mutex m;
      return m;
    }
    std::lock_guard<std::mutex> hold;
  };
} // namespace backcomb::fem
