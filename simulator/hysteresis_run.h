// The mobile ions of a case in a run: their figures for summary.json, and
// the hysteresis scan of section "Hysteresis scan" (fem/ion_scan.h) with
// its jv.csv columns, summary block and ion-density snapshots.
#pragma once

#include "fem/drift_diffusion.h"
#include "fem/ion_scan.h"
#include "postprocess/jv_tables.h"
#include "simulator/case_file.h"

#include <nlohmann/json.hpp>

#include <functional>
#include <string>
#include <vector>

namespace backcomb::simulator
{
  // summary.json "mobile_ions": null without ions; otherwise the entries,
  // the ionic Debye length, the ions' time scales and the mean density of
  // the solver's state (equal to the entry: the number is conserved).
  nlohmann::json mobile_ions_json(const Case &c, const fem::DriftDiffusionSolver &solver);

  struct HysteresisOutput
  {
    bool                            ran       = false;
    bool                            converged = false;
    nlohmann::json                  summary   = nullptr; // summary.json "hysteresis_scan"
    std::vector<postprocess::JVColumn> columns;          // for jv.csv
    std::vector<fem::HysteresisCurve> curves;            // each direction's points, for the J-V plot
  };

  // Runs the scan when Hysteresis scan/Scan rate > 0, from the solver's
  // dark equilibrium (ions in their steady state), and writes the
  // ion-density snapshots to <folder>/fields/ions_*.vtu with
  // <folder>/ions.pvd (time = seconds since the scan began) when
  // `write_fields`. Leaves the solver back in the steady mode.
  HysteresisOutput run_hysteresis_scan(fem::DriftDiffusionSolver &solver, const Case &c, const std::string &folder,
                                       double light, bool write_fields,
                                       const std::function<void(const std::string &)> &progress);
} // namespace backcomb::simulator
