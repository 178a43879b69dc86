// Parameter sweeps behind the `sweep` and `merge` subcommands: a grid of
// cases over one or more case-file entries, each case the full solve
// pipeline in its own folder, farmed over MPI ranks or scheduler array
// tasks, resumable, and merged into one table, one plot and a
// recommendation.
//
// Folder layout of a sweep (FOLDER = --out):
//   FOLDER/sweep-plan.json       the grid: case ids and their overrides
//   FOLDER/cases/<id>/           one `solve` folder per case, plus solve.log;
//                                summary.json marks a finished case,
//                                failed.json a case that stopped with an error
//   FOLDER/sweep.csv, sweep.json the merged table and the recommendation
//   FOLDER/sweep.svg, sweep.png  PCE and collection efficiency vs. the
//                                first swept entry
//   FOLDER/sweep-fields_V<bias>.pvd  ParaView collection of the cases'
//                                fields, indexed by the first swept value
#pragma once

#include <cstddef>
#include <limits>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // One swept entry: its case-file path and its values as text.
  struct SweptEntry
  {
    std::string              path;   // "Geometry/Gap"
    std::vector<std::string> values; // "5", "10", ...
    std::string              unit;   // from the entry's documentation; "" if unknown
  };

  // Expands the value list of a --vary argument. The list is
  // comma-separated; each item is
  //   a value            5   or   substrate   (any text without ':' or ',')
  //   a linear range     start:stop:step      start, start+step, ... up to
  //                                           stop (inclusive within 1e-9
  //                                           of a step); step may be
  //                                           negative when stop < start
  //   a geometric range  start:stop:xN        N values from start to stop
  //                                           (both > 0, N >= 2) with a
  //                                           constant ratio, rounded to 6
  //                                           significant digits
  // Values keep the order given. Empty items, malformed ranges, more than
  // 10000 values and a value given twice throw InputError naming `entry`.
  std::vector<std::string> expand_values(const std::string &entry, const std::string &list);

  // Parses one --vary argument "Section/Name=LIST" (entry not yet checked
  // against the case file; make_plan does that).
  SweptEntry parse_vary(const std::string &text);

  struct SweepCase
  {
    std::string              id;        // folder name under cases/
    std::vector<std::string> values;    // one per swept entry
    std::vector<std::string> overrides; // the --set list plus the swept values
    // Electrode pitch w_e + w_h + 2 g (centre to centre of neighbouring
    // fingers of the same polarity), NaN for the test strip.
    double pitch_um = std::numeric_limits<double>::quiet_NaN();
  };

  struct SweepPlan
  {
    std::string              case_file; // as given on the command line
    std::string              case_text; // its content, to detect a changed case on resume
    std::vector<std::string> sets;      // the --set overrides common to all cases
    std::vector<SweptEntry>  entries;   // the --vary entries, in order
    // The cartesian product of the entries' values; the first entry varies
    // fastest, so the cases of one line of the plot are consecutive.
    std::vector<SweepCase> cases;
  };

  // Builds the grid and checks every grid point with read_case, so that an
  // invalid entry or value is reported (InputError) before anything is
  // written. A point whose physics fails later is just a failed case.
  SweepPlan make_plan(const std::string              &case_file,
                      const std::vector<std::string> &sets,
                      const std::vector<std::string> &vary);

  struct SweepOptions
  {
    std::string folder;
    bool        quiet = false;
    // Array-job share: this process runs the cases i with
    // i % tasks == task - 1 (task is 1-based) and does not merge.
    // tasks == 0: the whole sweep, merged at the end.
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
  int run_sweep(const SweepPlan &plan, const SweepOptions &options);

  // One row of the merged table.
  struct SweepRow
  {
    std::string                id;
    std::vector<std::string>   values;
    double                     pitch_um = std::numeric_limits<double>::quiet_NaN();
    std::string                status; // converged | partial | failed | missing
    std::string                reason; // first failure diagnostic ("" if none)
    std::optional<double>      footprint_width_um, active_width_um, collection_efficiency,
      Jsc, Voc, FF, PCE, Jsc_active, PCE_active, dead_zone_fraction, seconds;
    // Power lost at the maximum power point, mW/cm^2 of footprint
    // (summary.json losses): recombination (bulk, surfaces, minority
    // carriers at the combs), Joule heat in the film, majority carriers
    // crossing the combs.
    std::optional<double>      loss_recombination, loss_film_joule, loss_contacts;
    // The whole comb cell (Electrodes section): fingers plus contact
    // resistance at its maximum power point, its PCE per footprint, and
    // the series resistance from suns-Voc (ohm cm^2).
    std::optional<double>      loss_electrodes, PCE_cell, series_resistance;
    std::optional<unsigned>    newton_iterations, step_halvings;
  };

  struct Recommendation
  {
    bool        valid = false;
    std::size_t best  = 0;        // row index of the highest PCE per footprint
    // Rows on the best row's line (same values of the other entries) that
    // form the contiguous run around the best with PCE >= (1 - 0.02) best,
    // in order of the first entry.
    std::vector<std::size_t> near_best;
    bool        at_edge = false;  // best at the first or last value of its line
    std::string text;             // the sentence printed and stored
  };

  // Relative PCE tolerance of the recommended range.
  constexpr double near_best_tolerance = 0.02;

  // Reads FOLDER/sweep-plan.json and every case's result; rows in plan order.
  std::vector<SweepRow> collect_rows(const std::string &folder, SweepPlan &plan);

  Recommendation recommend(const SweepPlan &plan, const std::vector<SweepRow> &rows);

  // Builds sweep.csv, sweep.json, the plots and the field collections from
  // the finished cases in FOLDER (reading FOLDER/sweep-plan.json), prints
  // the table and the recommendation. Returns 0 when every case converged
  // (or is partial), exit_no_convergence when a case failed or is missing.
  int merge_sweep(const std::string &folder, bool quiet);
} // namespace backcomb::study
