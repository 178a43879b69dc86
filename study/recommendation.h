// The recommendation of a study: the best case, the contiguous range of
// the first varied entry within a tolerance of its PCE, and a sentence
// that says so, naming the criterion that decided. With the case's
// Fabrication section (StudyPlan::fabrication) it considers only gaps the
// patterning makes and, when the first --vary entry is Geometry/Gap, names
// the gap to make: the widest (or, with a cost, the cheapest) within the
// near-best margin, whether the gap tolerance keeps the PCE within the
// margin, which gaps the solve cannot tell apart, and the loss that sets
// the limit of wider gaps.
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

  // Relative PCE tolerance of the recommended range (the default of
  // Fabrication/Near-best margin).
  constexpr double near_best_tolerance = 0.02;

  // Relative PCE difference below which two cases are not told apart: the
  // maximum power point is refined to a few mV and the mesh error of the
  // PCE is of this order (common practice for this kind of solve, no
  // source).
  constexpr double solve_resolution = 1e-3;

  // How the gap tolerance was checked.
  enum class ToleranceCheck
  {
    not_asked, // Fabrication/Gap tolerance = 0
    holds,     // PCE within the margin at both ends of gap +/- tolerance
    fails,     // below the margin at one end at least
    not_known  // an end outside the computed gaps, or next to a failed case
  };

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
    double      margin  = near_best_tolerance; // relative, Fabrication/Near-best margin
    // Cases with a result that lie outside the fabrication limits (not
    // considered).
    std::size_t outside_limits = 0;

    // When the first --vary entry is Geometry/Gap (numeric values):
    bool gap_study = false;
    // Row of the widest gap of near_best, of the gap to make (the widest,
    // or the cheapest with Fabrication/Cost per gap), and of the next
    // computed gap wider than the widest on the line, if any.
    std::optional<std::size_t> widest, chosen, beyond;
    // beyond lies above Fabrication/Largest gap: the limit is the process.
    bool beyond_outside_limits = false;
    // Gap tolerance around the chosen gap: PCE (deciding criterion)
    // interpolated linearly between the computed gaps at gap -/+ tolerance.
    ToleranceCheck        tolerance = ToleranceCheck::not_asked;
    std::optional<double> pce_low, pce_high;
    // Rows on the best's line whose PCE lies within solve_resolution of the
    // best (not the best itself): the solve cannot separate them.
    std::vector<std::size_t> inseparable;
    // The widest gap within the margin and the next one differ by less than
    // solve_resolution: where the margin ends is not resolved.
    bool limit_unresolved = false;
    // The LossPart (key) that grows most from the best gap to `beyond`, and
    // by how much (mW/cm^2 of footprint); "" when not known or none grows.
    std::string limiting_loss;
    double      limiting_growth = 0;

    std::string text; // the sentence printed and stored
  };

  // The gap of a row: StudyRow::gap_um, or the value of a varied
  // Geometry/Gap; nothing when neither is known.
  std::optional<double> gap_of(const StudyPlan &plan, const StudyRow &row);

  Recommendation recommend(const StudyPlan &plan, const std::vector<StudyRow> &rows);
} // namespace backcomb::study
