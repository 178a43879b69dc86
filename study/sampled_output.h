// What a sweep with uncertain entries adds to its files: the sampled
// recommendation and the sensitivity ranking as parts of sweep.json, and
// FOLDER/sensitivity.csv.
#pragma once

#include "study/confidence.h"
#include "study/plan.h"

#include <nlohmann/json.hpp>

#include <string>
#include <vector>

namespace backcomb::study
{
  // The "recommendation" of sweep.json for a sweep with samples.
  nlohmann::json sampled_recommendation_json(const StudyPlan &plan, const std::vector<StudyRow> &rows,
                                             const SampledRecommendation &r);

  // The "sensitivity" of sweep.json.
  nlohmann::json sensitivity_json(const SampledRecommendation &r);

  // sensitivity.csv: one line per result and entry, ranked.
  std::string sensitivity_csv_text(const SampledRecommendation &r);
} // namespace backcomb::study
