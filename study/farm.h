// Running a study: this process's share of the plan's cases, over MPI
// ranks and scheduler array tasks, resuming where an earlier run stopped.
#pragma once

#include "study/plan.h"

#include <string>

namespace backcomb::study
{
  struct StudyOptions
  {
    std::string folder;
    bool        quiet = false;
    // Array-job share: this process runs the cases i with
    // i % tasks == task - 1 (task is 1-based) and does not merge.
    // tasks == 0: the whole study, merged at the end.
    unsigned task = 0, tasks = 0;
    // Recompute cases that finished with status "failed" (by default every
    // finished case, failed or not, is kept).
    bool retry_failed = false;
  };

  // Runs this process's share of the plan (under MPI, rank r of N takes
  // every N-th case of the share, each solved on MPI_COMM_SELF), skipping
  // finished cases; then, unless a task share, rank 0 merges. Every rank
  // must call it. Returns the process exit code: 0 when every case
  // converged (or is partial), exit_no_convergence when a case failed or
  // is missing, and throws InputError / OutputError.
  int run_study(const StudyPlan &plan, const StudyOptions &options);
} // namespace backcomb::study
