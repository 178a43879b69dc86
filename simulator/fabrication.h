// Section "Fabrication" of a case file: what the patterning process can
// make and what the designer prefers. Only a sweep's recommendation reads
// it (study/recommendation.h); a solve ignores it.
#pragma once

#include <utility>
#include <vector>

namespace backcomb::simulator
{
  struct FabricationSettings
  {
    double smallest_gap_um  = 0;     // narrowest gap the patterning makes
    double largest_gap_um   = 10000; // widest gap it makes
    double gap_tolerance_um = 0;     // the made gap is the drawn one +/- this
    // "Widest gap within this much of the best PCE", relative, in % (the
    // recommendation's margin).
    double near_best_percent = 2;
    // With uncertain entries (a sweep's samples): the recommended gap is
    // within the near-best margin of each sample's best in at least this
    // share of the samples, in %.
    double confidence_percent = 90;
    // Relative cost of making a gap: (gap um, cost) pairs in increasing gap,
    // linear in between and constant beyond the ends; empty: no cost.
    std::vector<std::pair<double, double>> gap_cost;

    // The cost at `gap_um` from gap_cost (1 when there is none).
    double cost_at(double gap_um) const;
  };
} // namespace backcomb::simulator
