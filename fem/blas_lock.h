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

#include <condition_variable>
#include <mutex>

namespace backcomb::fem
{
  // Held while alive. A background holder (the dark J-V's solver, which
  // only has to finish before the run does) waits as long as a foreground
  // one waits, so that the light J-V, whose path decides the run's time,
  // is held up by at most one factorisation of the dark one.
  class BlasTurn
  {
  public:
    explicit BlasTurn(const bool background = false)
    {
      State                       &s = state();
      std::unique_lock<std::mutex> hold(s.mutex);
      if (!background)
        ++s.foreground_waiting;
      s.turn.wait(hold, [&] { return !s.busy && (!background || s.foreground_waiting == 0); });
      if (!background)
        --s.foreground_waiting;
      s.busy = true;
    }
    ~BlasTurn()
    {
      State &s = state();
      {
        const std::lock_guard<std::mutex> hold(s.mutex);
        s.busy = false;
      }
      s.turn.notify_all();
    }
    BlasTurn(const BlasTurn &)            = delete;
    BlasTurn &operator=(const BlasTurn &) = delete;

  private:
    struct State
    {
      std::mutex              mutex;
      std::condition_variable turn;
      bool                    busy               = false;
      unsigned                foreground_waiting = 0;
    };
    static State &
    state()
    {
      static State s;
      return s;
    }
  };
} // namespace backcomb::fem
