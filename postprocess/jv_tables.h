// The J-V results as files and summary blocks: jv.csv (light and dark
// currents on the union of biases), the metrics block of summary.json, and
// the per-bias point list with its status.
#pragma once

#include "fem/jv_scan.h"
#include "fem/operating_points.h"

#include <nlohmann/json.hpp>

#include <optional>
#include <string>
#include <vector>

namespace backcomb::postprocess
{
  // J at 0 V interpolated on a converged curve, if the curve reaches it.
  std::optional<double> short_circuit_current(const std::vector<fem::JVPoint> &curve);

  // The metrics; when the curve does not bracket them (a failed point cut
  // it off), null in place of every number that needs the missing part:
  // only Jsc can then remain. `active_scale` turns footprint figures into
  // per-active-area ones (null figures when not known); `input_power` in
  // mW/cm^2 (PCE null when not positive).
  nlohmann::json metrics_json(const fem::JVMetrics &m, const std::optional<double> &jsc,
                              const std::optional<double> &active_scale, double input_power);

  // Every bias of `grid` with its status in scan `label`: "converged" with
  // its current, "failed", or "not computed" (beyond a failure, or when the
  // scan could not start), the last two with a null current. Appended to
  // `list`.
  void add_points(nlohmann::json &list, const std::string &label, const fem::JVScan &s,
                  const std::vector<double> &grid);

  // A further column of jv.csv: (voltage, current) pairs, e.g. one
  // direction of a hysteresis scan; empty cells where it has no bias.
  struct JVColumn
  {
    std::string                            name; // "J_reverse_scan_mA_per_cm2"
    std::vector<std::pair<double, double>> points;
  };

  // jv.csv: current density per footprint in the generator convention.
  std::string jv_csv(const fem::JVScan &light, const fem::JVScan &dark, double footprint_um,
                     const std::vector<JVColumn> &more = {});
} // namespace backcomb::postprocess
