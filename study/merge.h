// Merging a study: from the cases' results to sweep.csv, sweep.json, the
// plot, the field collections, the screen table and the recommendation.
#pragma once

#include "study/columns.h"
#include "study/plan.h"
#include "study/recommendation.h"

#include <nlohmann/json.hpp>

#include <string>
#include <vector>

namespace backcomb::study
{
  // The text of sweep.csv: comment lines, the header, one line per row.
  std::string csv_text(const StudyPlan &plan, const std::vector<StudyRow> &rows);

  // One case as stored in the "cases" array of sweep.json.
  nlohmann::json row_json(const StudyPlan &plan, const StudyRow &row);

  // sweep.json without its "files" and "warnings" blocks: the plan's
  // entries, the counts per status, the cases and the recommendation.
  nlohmann::json study_json(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec);

  // The table printed at the end of a study (numbers right-aligned, the
  // status left-aligned last), then a line per failed case with its reason.
  std::string screen_table(const StudyPlan &plan, const std::vector<StudyRow> &rows);

  // Builds sweep.csv, sweep.json, the plots and the field collections from
  // the finished cases in FOLDER (reading FOLDER/sweep-plan.json), prints
  // the table and the recommendation. Returns 0 when every case converged
  // (or is partial), exit_no_convergence when a case failed or is missing.
  int merge_study(const std::string &folder, bool quiet);
} // namespace backcomb::study
