// The bands of a sweep with uncertain entries: per grid point (one value of
// every --vary entry), the median and the chosen percentiles (--band) over
// the samples of every numeric column, and how many samples have a result
// there. Written as FOLDER/sweep-bands.csv and the "bands" part of
// sweep.json; the plot draws the median line and the band.
#pragma once

#include "study/columns.h"
#include "study/plan.h"

#include <nlohmann/json.hpp>

#include <string>
#include <vector>

namespace backcomb::study
{
  struct BandPoint
  {
    std::vector<std::string> values;      // of the plan's entries
    std::vector<std::size_t> rows;        // row index of each sample here, in sample order
    std::size_t              with_result = 0; // converged or partial
    std::size_t              failed      = 0; // failed or missing
    // Each column's sample quantile (sample_quantile, Hyndman and Fan type
    // 7) over the samples with a value: the median, and the band's lower
    // and upper percentile. id, values, gap_um and pitch_um as the grid
    // point's; status converged when any sample has a result.
    StudyRow median, low, high;
  };

  // One point per grid point, in plan order (rows in plan order: sample s
  // at grid point g is row s * grid_size + g).
  std::vector<BandPoint> band_points(const StudyPlan &plan, const std::vector<StudyRow> &rows);

  // The medians as rows (one line per grid point), for the screen table,
  // the plot's lines and the recommendation's helpers.
  std::vector<StudyRow> median_rows(const std::vector<BandPoint> &points);

  // The text of sweep-bands.csv: comment lines, the header (the entries,
  // samples, samples_with_result, samples_failed, then per numeric column
  // NAME_median, NAME_pLOW, NAME_pHIGH), one line per grid point.
  std::string bands_csv_text(const StudyPlan &plan, const std::vector<BandPoint> &points);

  // The "bands" part of sweep.json.
  nlohmann::json bands_json(const StudyPlan &plan, const std::vector<BandPoint> &points);
} // namespace backcomb::study
