// The recommendation of a study: the best case, the contiguous range of
// the first varied entry within a tolerance of its PCE, and a sentence
// that says so, naming the criterion that decided.
#pragma once

#include "study/columns.h"
#include "study/plan.h"

#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // What makes a case the best one.
  enum class Criterion
  {
    // The period's PCE per footprint: the electrodes are ideal (no
    // Electrodes section), so the period stands for the whole cell.
    pce_per_footprint,
    // The whole comb cell's PCE (Electrodes section): the fingers'
    // resistance and the contact resistance are included, and a wider
    // pitch loads each finger with more current.
    pce_of_comb_cell
  };

  // The whole comb cell's PCE decides as soon as one case has it;
  // otherwise the period's PCE per footprint.
  Criterion deciding_criterion(const std::vector<StudyRow> &rows);

  // The criterion in words, as printed and stored in sweep.json
  // ("highest PCE per footprint").
  std::string criterion_text(Criterion criterion);

  // The PCE that the criterion compares, in %.
  std::optional<double> deciding_pce(Criterion criterion, const StudyRow &row);

  // Relative PCE tolerance of the recommended range.
  constexpr double near_best_tolerance = 0.02;

  struct Recommendation
  {
    bool        valid = false;
    Criterion   criterion = Criterion::pce_per_footprint; // the one that decided
    std::size_t best      = 0;                            // row index of the highest deciding PCE
    // Rows on the best row's line (same values of the other entries) that
    // form the contiguous run around the best with a deciding PCE >=
    // (1 - near_best_tolerance) best, in order of the first entry.
    std::vector<std::size_t> near_best;
    bool        at_edge = false; // best at the first or last value of its line
    std::string text;            // the sentence printed and stored
  };

  Recommendation recommend(const StudyPlan &plan, const std::vector<StudyRow> &rows);
} // namespace backcomb::study
