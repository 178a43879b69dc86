// One run of a case, behind the `mesh` and `solve` subcommands.
//
// `solve` is the class CaseRun (simulator/case_run.cc), whose run() calls
// one named step per stage of the data flow:
//
//   prepare_folder        optics checked, results folder, stale summary removed
//   build_mesh            Gmsh period mesh, shared by the processes
//   set_up_solver         device model, drift-diffusion solver, guard rails,
//                         checkpoint of an interrupted run
//   solve_light_jv        equilibrium, light ramp, J-V scan, MPP and Voc refined
//   write_fields          VTK fields at the requested biases, with the
//                         adjoint collection probability under light
//   analyse_collection    collected vs. terminal current and the dead zone
//                         at short circuit
//   compute_power_balance where the power goes at SC, MPP, OC and chosen biases
//   compute_suns_voc      open circuit at lower light levels
//   solve_dark_jv         the dark J-V over the same biases
//   evaluate_comb_cell    the whole comb cell (fingers, contact resistance)
//                         and the suns-Voc series resistance
//   settle_status         converged, partial or failed
//   write_results         jv.csv, losses.csv and chart, summary.json (last)
//   print_report          the few lines a user reads
//
// Each step is timed with deal.II's TimerOutput; the times go to
// summary.json ("timings_s").
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
    // Also write the progress lines, with the elapsed time, to this file
    // (`solve --log FILE`); "" for none.
    std::string log;
    // Processes that solve this one case together (a sweep passes
    // MPI_COMM_SELF so that each rank runs its own cases).
    MPI_Comm    communicator = MPI_COMM_WORLD;
  };

  // Both return a process exit code (see base/errors.h) and throw
  // InputError / OutputError for invalid input and unwritable output.
  int run_mesh(const Case &c, const RunOptions &options);
  int run_solve(const Case &c, const RunOptions &options);
} // namespace backcomb::simulator
