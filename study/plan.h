// The grid of a study: the cartesian product of the varied entries' values,
// each point a case with its own folder name and overrides, and the plan
// saved as FOLDER/sweep-plan.json.
#pragma once

#include "study/values.h"

#include <nlohmann/json.hpp>

#include <limits>
#include <string>
#include <vector>

namespace backcomb::study
{
  // At most this many cases per grid.
  constexpr std::size_t max_cases = 100000;

  struct StudyCase
  {
    std::string              id;        // folder name under cases/
    std::vector<std::string> values;    // one per varied entry
    std::vector<std::string> overrides; // the --set list plus the varied values
    // Electrode pitch w_e + w_h + 2 g (centre to centre of neighbouring
    // fingers of the same polarity), NaN for the test strip.
    double pitch_um = std::numeric_limits<double>::quiet_NaN();
    // result_fingerprint() of the plan's case text and these overrides:
    // the fingerprint a summary.json of this case must carry.
    std::string fingerprint;
  };

  struct StudyPlan
  {
    std::string              case_file; // as given on the command line
    std::string              case_text; // its content, to detect a changed case on resume
    std::vector<std::string> sets;      // the --set overrides common to all cases
    std::vector<StudyEntry>  entries;   // the --vary entries, in order
    // The cartesian product of the entries' values; the first entry varies
    // fastest, so the cases of one line of the plot are consecutive.
    std::vector<StudyCase> cases;
  };

  // Builds the grid and checks every grid point with read_case, so that an
  // invalid entry or value is reported (InputError) before anything is
  // written. A point whose physics fails later is just a failed case. The
  // entries' units come from entry_unit().
  StudyPlan make_plan(const std::string              &case_file,
                      const std::vector<std::string> &sets,
                      const std::vector<std::string> &vary);

  // The plan as stored in sweep-plan.json, and back (InputError naming
  // `file` when it is not a plan or is damaged).
  nlohmann::json plan_to_json(const StudyPlan &plan);
  StudyPlan      plan_from_json(const nlohmann::json &j, const std::string &file);

  // FOLDER/sweep-plan.json read back.
  StudyPlan read_plan(const std::string &folder);

  // Why `existing` (the plan found in a folder) is not `wanted`, or "" when
  // they describe the same cases.
  std::string plan_difference(const StudyPlan &existing, const StudyPlan &wanted);
} // namespace backcomb::study
