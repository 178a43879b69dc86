// Parameter studies behind the `sweep` and `merge` subcommands: a grid of
// cases over one or more case-file entries, each case the full solve
// pipeline in its own folder, farmed over MPI ranks or scheduler array
// tasks, resumable, and merged into one table, one plot and a
// recommendation. (The user-facing names keep the word "sweep": the
// subcommand, sweep.csv, sweep.json, sweep-plan.json.)
//
//   values.h          the --vary value syntax (lists, linear and geometric ranges)
//   plan.h            the grid of cases and sweep-plan.json
//   layout.h          where things lie in a study folder
//   farm.h            running this process's share over ranks and array tasks, resume, retry
//   progress.h        the progress line or log lines while cases run
//   columns.h         the one table of columns (CSV, JSON, screen, reading a case)
//   rows.h            the rows read from the cases' folders
//   recommendation.h  the best case, the range near it, and the criterion that decided
//   merge.h           sweep.csv, sweep.json, the screen table, the plot and field collections
//   uncertainty.h     uncertain entries: distributions, fit.json, Sobol' / Latin points, quantiles
//   bands.h           median and band of every column per grid point (sweep-bands.csv)
//   confidence.h      the recommendation over samples (Fabrication/Confidence)
//   sensitivity.h     first-order indices from the solved samples (given-data estimator)
//   sampled_output.h  sensitivity.csv and the sampled parts of sweep.json
#pragma once

#include "study/bands.h"
#include "study/columns.h"
#include "study/confidence.h"
#include "study/farm.h"
#include "study/layout.h"
#include "study/merge.h"
#include "study/plan.h"
#include "study/recommendation.h"
#include "study/rows.h"
#include "study/sampled_output.h"
#include "study/sensitivity.h"
#include "study/uncertainty.h"
#include "study/values.h"
