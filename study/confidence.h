// The recommendation of a sweep with uncertain entries. Each sample is a
// complete study of its own (the same sampled values at every grid point),
// so each sample has its own best gap and its own run of gaps within the
// near-best margin (recommend() applied to that sample's cases alone). The
// recommended gap is the widest gap that lies within the margin of its
// sample's best in at least Fabrication/Confidence % of the samples (with
// Fabrication/Cost per gap: the cheapest such gap, of equal cost the
// wider). A sample with a failed or missing case is counted and reported
// but takes no part: its own best is not known.
//
// With every sample alike (no uncertainty) each gap's share is 0 or 1 and
// the result is the unsampled recommendation's gap to make.
#pragma once

#include "study/bands.h"
#include "study/recommendation.h"
#include "study/sensitivity.h"

#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  struct SampledRecommendation
  {
    bool        valid   = false;
    std::size_t samples = 0, complete = 0; // all samples; those without a failed or missing case
    double      confidence = 0.9;          // Fabrication/Confidence as a fraction
    double      margin     = near_best_tolerance;
    bool        gap_study  = false; // the first --vary entry is Geometry/Gap
    // Per sample: its own recommendation (row indices within that sample's
    // grid points), whether it is complete.
    std::vector<Recommendation> per_sample;
    std::vector<bool>           sample_complete;
    // Per grid point: the share of complete samples whose near-best run
    // holds it, and how many complete samples have their best there.
    std::vector<double>      share;
    std::vector<std::size_t> best_count;
    // The grid point recommended (share >= confidence), and the one with
    // the largest share (the first of equal shares).
    std::optional<std::size_t> chosen, most_often;
    // Per complete sample with a recommendation (else nothing): the gap it
    // chooses (the widest within its margin; for a study of another entry,
    // the value of its best case) and its deciding PCE at the chosen grid
    // point.
    std::vector<std::optional<double>> sample_choice, pce_at_chosen;
    // The next wider grid point than the chosen one on its line, and the
    // loss part (LossPart::key) whose median grows most from the chosen to
    // it, with the growth (mW/cm^2 of footprint); "" when none grows or
    // not known.
    std::optional<std::size_t> beyond;
    std::string                limiting_loss;
    double                     limiting_growth = 0;
    // Fabrication/Gap tolerance t > 0 (gap studies): of the counted samples
    // with a recommendation, those whose deciding PCE at the chosen gap
    // -/+ t (interpolated linearly between that sample's computed gaps)
    // stays within the margin of that sample's best, and those where an
    // end lies outside the computed gaps or next to a missing PCE.
    std::size_t tolerance_holds = 0, tolerance_unknown = 0, tolerance_checked = 0;
    // The neighbours of the named grid point (the chosen one, else the most
    // often within the margin) on its line, compared sample by sample: in
    // how many counted samples each has the higher deciding PCE by more
    // than solve_resolution (the rest are ties). The samples separate the
    // two when one of them is higher in at least the confidence share.
    struct Comparison
    {
      std::size_t other        = 0; // grid point
      std::size_t named_higher = 0, other_higher = 0, counted = 0;
      bool        separated    = false;
    };
    std::vector<Comparison> neighbours;
    // First-order sensitivity of the two results on each uncertain entry.
    SensitivityRanking choice_sensitivity, pce_sensitivity;
    std::string text;
  };

  SampledRecommendation recommend_with_samples(const StudyPlan &plan, const std::vector<StudyRow> &rows,
                                               const std::vector<BandPoint> &points);
} // namespace backcomb::study
