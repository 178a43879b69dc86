// A J-V scan at a finite scan rate with mobile ions that move during it
// (hysteresis): preconditioning at a bias for a time, then the scan in one
// or both directions, each bias reached by implicit time steps of the ions
// (DriftDiffusionSolver::solve_time_step, BDF2) with the bias ramped
// linearly in time and the step length chosen by a local error estimate.
#pragma once

#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"

#include <functional>
#include <string>
#include <vector>

namespace backcomb::fem
{
  struct HysteresisSettings
  {
    double rate  = 0.1;   // V/s, > 0
    double low   = -0.1;  // V: the scan spans [low, high]
    double high  = 1.3;   // V
    double step  = 0.02;  // V between recorded biases
    double light = 1.0;   // light factor during preconditioning and scan
    // Held at this bias (under the light) for this long before the scan,
    // starting from the ions' steady state in the dark at 0 V.
    double precondition_bias = 1.3; // V
    double precondition_time = 10;  // s; 0: none
    // Directions in order: "reverse" (high to low) and/or "forward".
    std::vector<std::string> directions = {"reverse", "forward"};
    // Local error tolerance of a time step on the ions' electrochemical
    // potential, kT/q (the change of ln c that the step may get wrong).
    double tolerance = 0.02;
    unsigned max_halvings = 8; // per bias step and for the light ramp
  };

  struct HysteresisPoint
  {
    double   time_s    = 0; // since the start of the scan
    double   voltage   = 0;
    double   current   = 0; // mA/cm^2, generator convention
    bool     converged = false;
  };

  struct HysteresisCurve
  {
    std::string            direction; // "reverse" or "forward"
    std::vector<HysteresisPoint> points;    // in scan order
    JVMetrics              metrics;
  };

  struct HysteresisScan
  {
    bool                   converged = false;
    std::string            diagnostic;      // why it stopped, if it failed
    std::vector<HysteresisCurve> curves;
    unsigned               time_steps = 0;  // accepted, preconditioning included
    unsigned               rejected   = 0;  // steps repeated with a shorter dt
    unsigned               newton_iterations = 0;
    double                 smallest_dt = 0, largest_dt = 0; // s, accepted steps of the scan
    double                 ion_number_drift = 0; // |N_end / N_start - 1|
    // Hysteresis index (PCE_reverse - PCE_forward) / PCE_reverse when both
    // directions were scanned and the reverse PCE is positive; NaN otherwise.
    double                 hysteresis_index = 0;
  };

  // Called at the end of preconditioning ("preconditioned") and at every
  // recorded bias of each curve, with the solver at that state.
  using HysteresisObserver = std::function<void(const std::string &direction, const HysteresisPoint &)>;

  // Runs the scan on a solver with mobile ions whose state is the dark
  // equilibrium (solve_equilibrium()); leaves it in a transient at the end
  // of the scan.
  HysteresisScan scan_with_ions(DriftDiffusionSolver &solver, const HysteresisSettings &settings,
                            const HysteresisObserver &observe = {});

  // Hysteresis index (PCE_rev - PCE_fwd) / PCE_rev of two curves' maximum
  // power (S. N. Habisreutinger, N. K. Noel, H. J. Snaith, ACS Energy Lett.
  // 3 (2018) 2472, who discuss this common definition and its limits; from
  // memory). NaN when the reverse curve delivers no power.
  double hysteresis_index(const JVMetrics &reverse, const JVMetrics &forward);
} // namespace backcomb::fem
