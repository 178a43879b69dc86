// The rows of a study's table, read from the cases' folders.
#pragma once

#include "study/columns.h"
#include "study/plan.h"

#include <string>
#include <vector>

namespace backcomb::study
{
  // A row from the files of a case folder: summary.json (converged, partial
  // or failed), failed.json (failed before a summary existed) or neither
  // (missing).
  StudyRow read_row(const std::string &folder, const StudyCase &c);

  // Reads FOLDER/sweep-plan.json into `plan` and every case's result; rows
  // in plan order.
  std::vector<StudyRow> collect_rows(const std::string &folder, StudyPlan &plan);

  // Rows sharing the values of every entry but the first (one line of the
  // plot), each line ordered by the first entry's value when all its values
  // are numbers, in plan order otherwise.
  std::vector<std::vector<std::size_t>> lines_of(const StudyPlan &plan, const std::vector<StudyRow> &rows);

  // The line of lines_of() that holds row `point` ({point} if none does).
  std::vector<std::size_t> line_through(const StudyPlan &plan, const std::vector<StudyRow> &rows, std::size_t point);
} // namespace backcomb::study
