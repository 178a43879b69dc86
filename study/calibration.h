// The calibration run (`backcomb calibrate`): fits chosen case-file
// entries to measured data of test cells (study/measured.h) by bounded
// non-linear least squares with PETSc's TAO (the bounded regularised
// Gauss-Newton method, TAOBRGN, with its proximal regularisation).
//
// Each data set names its device by overrides of the base case. One model
// evaluation solves every device once (simulator/device_response.h); the
// residual Jacobian is by forward differences, the perturbed evaluations
// farmed over the MPI ranks (rank 0 drives the optimiser, every rank
// solves devices on its own). Every evaluation is appended to
// FOLDER/evaluations.jsonl, so that a killed run, started again with the
// same command, replays them without solving and goes on.
//
// Writes FOLDER/fit.json (fitted values, standard errors, correlations,
// warnings, history), FOLDER/fit-points.csv, FOLDER/fitted.prm (the case
// with the fitted values, ready for solve and sweep) and one plot per
// data set (fit-LABEL.svg/.png).
#pragma once

#include <mpi.h>

#include <string>
#include <vector>

namespace backcomb::study
{
  // One fitted entry: "Section/Name=LOW:HIGH[:log|:linear]".
  struct FittedEntry
  {
    std::string path;
    double      low = 0, high = 0;
    bool        log   = false; // logarithmic scaling (default when 0 < LOW and HIGH >= 10 LOW)
    double      start = 0;     // the case's value

    // The optimiser's variable u in [0, 1] and back.
    double to_unit(double value) const;
    double from_unit(double u) const;
  };

  // Parses the text of one --fit option (InputError naming it).
  FittedEntry parse_fitted_entry(const std::string &text);

  enum class RobustLoss
  {
    none,   // plain least squares
    huber,  // quadratic within the scale, linear beyond
    cauchy  // logarithmic beyond the scale
  };

  struct CalibrationOptions
  {
    std::string              case_file;
    std::vector<std::string> sets;       // --set, common to every device
    std::vector<std::string> data_files; // --data
    std::vector<std::string> fit;        // --fit
    RobustLoss               loss       = RobustLoss::none;
    double                   loss_scale = 3; // in standard deviations of the data
    unsigned                 max_iterations = 30;
    std::string              folder = "backcomb-fit";
    bool                     quiet  = false;
  };

  // Parses "--loss NAME[:SCALE]" into the options (InputError).
  void parse_loss(const std::string &text, CalibrationOptions &o);

  // Runs the calibration on every rank of `comm`; returns the exit code
  // (0, or 3 when the optimiser stopped without meeting its tolerance).
  int run_calibration(const CalibrationOptions &o, MPI_Comm comm);
} // namespace backcomb::study
