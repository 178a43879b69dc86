// The sweep plot: power conversion efficiency (per footprint) and
// collection efficiency against the first swept entry, one line per
// combination of the other entries, drawn with PLplot's Cairo drivers as
// SVG and PNG.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace backcomb::postprocess
{
  struct PlotSeries
  {
    std::string         label;     // legend text; "" for a one-line plot
    std::vector<double> x, pce, eta; // NaN where a case has no metrics
  };

  struct SweepPlotData
  {
    std::string             x_label; // entry and unit
    std::string             pce_label = "PCE per footprint (%)"; // y label of the upper panel
    std::vector<PlotSeries> series;
    // Best point and the range within the tolerance of the best PCE.
    std::optional<double> best_x, best_pce, range_from, range_to;
    std::string           range_label; // legend text of the shaded range
  };

  // Writes `stem`.svg and `stem`.png (each to a temporary name first, then
  // renamed). The x axis is logarithmic when the positive x values span
  // more than one decade. Returns the files written; a file that cannot be
  // drawn (missing PLplot driver, unwritable folder) is skipped with a
  // message in `warnings`.
  std::vector<std::string> write_sweep_plots(const SweepPlotData     &data,
                                             const std::string       &stem,
                                             std::vector<std::string> &warnings);

  // Horizontal bars, one per label from the top down, coloured by category
  // (an index into category_names, shown as the legend).
  struct BarChart
  {
    std::string              title, x_label;
    std::vector<std::string> labels;
    std::vector<double>      values;
    std::vector<int>         category;
    std::vector<std::string> category_names;
    std::string              value_format = "%.2f";
  };

  // `stem`.svg and `stem`.png, like write_sweep_plots.
  std::vector<std::string> write_bar_chart(const BarChart &chart, const std::string &stem,
                                           std::vector<std::string> &warnings);
} // namespace backcomb::postprocess
