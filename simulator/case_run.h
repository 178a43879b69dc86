// The case pipeline behind the `mesh` and `solve` subcommands: geometry ->
// device model -> operating points -> result files.
#pragma once

#include "simulator/case_file.h"
#include "base/files.h"

#include <mpi.h>

#include <string>

namespace backcomb::simulator
{
  struct RunOptions
  {
    std::string folder;
    bool        quiet = false;
    // Processes that solve this one case together (a sweep passes
    // MPI_COMM_SELF so that each rank runs its own cases).
    MPI_Comm    communicator = MPI_COMM_WORLD;
  };

  // Both return a process exit code (see geometry/input.h) and throw
  // InputError / OutputError for invalid input and unwritable output.
  int run_mesh(const Case &c, const RunOptions &options);
  int run_solve(const Case &c, const RunOptions &options);
} // namespace backcomb::simulator
