// The sweep plot: power conversion efficiency (per footprint) and
// collection efficiency against the first swept entry, one line per
// combination of the other entries, drawn with PLplot's Cairo drivers as
// SVG and PNG.
#pragma once

#include <array>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace backcomb::postprocess
{
  struct PlotSeries
  {
    std::string         label;     // legend text; "" for a one-line plot
    std::vector<double> x, pce, eta; // NaN where a case has no metrics
    // A band around each line (a sweep with uncertain entries: the lines
    // are medians over the samples); empty when there is none, else one
    // value per x, NaN where not known.
    std::vector<double> pce_low, pce_high, eta_low, eta_high;
  };

  struct SweepPlotData
  {
    std::string             x_label; // entry and unit
    std::string             pce_label = "PCE per footprint (%)"; // y label of the upper panel
    std::vector<PlotSeries> series;
    // Best point and the range within the tolerance of the best PCE.
    std::optional<double> best_x, best_pce, range_from, range_to;
    std::string           range_label; // legend text of the shaded range
    std::string           best_label = "highest PCE"; // legend text of the best point
    std::string           band_label;  // legend text of the bands ("5-95 % of the samples")
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

  // The J-V curves of one solve: light and dark (either may be empty),
  // current density in mA/cm^2 against bias in V, the maximum power point
  // marked.
  struct JVPlotData
  {
    std::vector<double>   light_v, light_j, dark_v, dark_j;
    std::optional<double> mpp_v, mpp_j;
    // More curves under the light, e.g. the scans of a hysteresis scan
    // ("reverse scan at 0.1 V/s"), drawn as lines without points.
    struct Curve
    {
      std::string         label;
      std::vector<double> v, j;
    };
    std::vector<Curve> scans;
  };

  // `stem`.svg and `stem`.png, like write_sweep_plots.
  std::vector<std::string> write_jv_plots(const JVPlotData &data, const std::string &stem,
                                          std::vector<std::string> &warnings);

  // Measured data against the fitted model (upper panel) and the residual
  // model - measured (lower panel), one data set of a calibration.
  struct FitPlotData
  {
    std::string         title, x_label, y_label, residual_label;
    std::vector<double> x, measured, fitted; // fitted NaN where the model did not converge
    std::vector<double> start;               // the model at the start values (may be empty)
    bool                log_y = false;       // |y| on a logarithmic axis (dark J-V)
  };

  // `stem`.svg and `stem`.png, like write_sweep_plots.
  std::vector<std::string> write_fit_plots(const FitPlotData &data, const std::string &stem,
                                           std::vector<std::string> &warnings);

  // Spectral response: named curves (fractions 0..1) against wavelength.
  struct SpectralPlotData
  {
    std::vector<double>                                     wavelength_nm;
    std::vector<std::pair<std::string, std::vector<double>>> curves; // legend text, values
    std::string                                             title;
  };

  // `stem`.svg and `stem`.png, like write_sweep_plots.
  std::vector<std::string> write_spectral_plots(const SpectralPlotData &data, const std::string &stem,
                                                std::vector<std::string> &warnings);

  // A field over the film cross-section on a regular grid, drawn with the
  // viridis colour map over a fixed range, with the contour at `contour`
  // in white, the fingers as grey bars under the film, and the vertical
  // scale exaggerated by `exaggeration` (stated in the title).
  struct FilmMapData
  {
    std::vector<double> x_um, y_um;   // grid lines, increasing
    std::vector<double> values;       // values[i * y_um.size() + j] at (x_um[i], y_um[j]); NaN: not drawn
    double              lo = 0, hi = 1; // colour range
    std::optional<double> contour;
    double              exaggeration = 1;
    std::vector<std::pair<double, double>> fingers; // [x0, x1] in um
    std::string         title, colour_label;
  };

  std::vector<std::string> write_film_map(const FilmMapData &data, const std::string &stem,
                                          std::vector<std::string> &warnings);

  // Cell outlines (quadrilaterals, corner coordinates in um) in a window of
  // the period at true scale, with the fingers as grey bars.
  struct MeshPictureData
  {
    std::vector<std::array<double, 8>>     cells; // x0 y0 x1 y1 x2 y2 x3 y3
    double                                 x_lo = 0, x_hi = 1, y_lo = 0, y_hi = 1;
    std::vector<std::pair<double, double>> fingers;
    std::string                            title;
  };

  std::vector<std::string> write_mesh_picture(const MeshPictureData &data, const std::string &stem,
                                              std::vector<std::string> &warnings);

  // The vertical exaggeration for a period `width_um` wide and
  // `thickness_um` thick: 1, 2 or 5 times a power of ten, so that the
  // drawn film is about four times wider than tall (at least 1).
  double film_exaggeration(double width_um, double thickness_um);
} // namespace backcomb::postprocess
