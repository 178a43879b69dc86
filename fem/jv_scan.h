// The J-V scan of one device: biases stepped outward from short circuit
// with a polynomial predictor, the maximum power point refined by bisection and
// the open-circuit voltage by regula falsi, every converged point kept with
// its state. "Scan" is the bias scan of one J-V; a parameter sweep over
// cases is a study (study/).
//
// Restartable: each converged point goes to a PointStore (the simulator's
// checkpoint); a rerun replays the points of an interrupted run, with their
// Newton counts, in the order the uninterrupted run computed them, so that
// the continuation after the last stored point starts from the same states
// and predictor.
#pragma once

#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"

#include <deal.II/lac/vector.h>

#include <functional>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // One converged operating point as stored.
  struct StoredPoint
  {
    // "light" or "dark" for a J-V point; "light-start" or "dark-start" for
    // the state a scan starts from (after the light ramp or equilibrium).
    std::string            sweep;
    double                 voltage  = 0; // V
    double                 current  = 0; // mA/cm^2 per footprint
    unsigned               newton   = 0; // Newton steps spent on this point
    unsigned               halvings = 0; // step halvings spent on this point
    dealii::Vector<double> state;
  };

  // Where converged points are kept (implemented by the checkpoint).
  class PointStore
  {
  public:
    virtual ~PointStore() = default;
    virtual void save(const StoredPoint &p) = 0;
  };

  // The store of this run and the points of an interrupted earlier run.
  struct Resume
  {
    PointStore              *store = nullptr;
    std::vector<StoredPoint> stored;

    const StoredPoint *find(const std::string &label, double v) const;
  };

  // One J-V point with the state it converged to.
  struct ScanPoint
  {
    JVPoint                jv;
    unsigned               halvings = 0;
    dealii::Vector<double> state;
  };

  struct JVScan
  {
    std::vector<ScanPoint>   points;   // sorted by voltage after each scan
    std::vector<std::string> failures; // diagnostics
    unsigned                 newton = 0, halvings = 0;
    double                   seconds = 0;
  };

  // One progress line ("light: V = 0.400 V, J = ..."); may do nothing.
  using ProgressLine = std::function<void(const std::string &)>;

  // The state a scan starts from at 0 V: equilibrium and the light ramp
  // (illuminate), or that state from the store.
  // `after_equilibrium` as in illuminate (not called for a stored state).
  StepReport start_state(DriftDiffusionSolver &solver, double light, unsigned max_halvings,
                         const std::string &label, const Resume &resume, const ProgressLine &stage = {},
                         const StateHook &after_equilibrium = {});

  // Scans `biases` (sorted, may hold 0) from the solver's current state:
  // 0 -> last, then (restarting from the same state) 0 -> first, or the
  // negative side first when `reverse`. Each side stops at its first
  // failure: later points would start from a state that is not a solution.
  // Under light the positive side goes on past its last bias, by `step`,
  // until the current changes sign (open circuit), at most 1 V further.
  void scan(DriftDiffusionSolver &solver, const std::vector<double> &biases, bool reverse, double light,
            double step, unsigned max_halvings, JVScan &out, const ProgressLine &progress,
            const std::string &label, const Resume &resume);

  // Solves at V (under full light) from the stored point nearest to it, or
  // takes the point from the store; adds it to the scan.
  bool solve_near(DriftDiffusionSolver &solver, JVScan &s, double v, double light, unsigned max_halvings,
                  const Resume &resume);

  // Puts the solver at bias v under full light: a converged point of the
  // scan, or a solve from the nearest one (added to the scan).
  bool go_to(DriftDiffusionSolver &solver, JVScan &s, double v, unsigned max_halvings, const Resume &resume);

  // Refines around the maximum power point down to `resolution` (V) and
  // finds V_oc by regula falsi to 1e-4 V.
  void refine(DriftDiffusionSolver &solver, JVScan &s, double resolution, unsigned max_halvings,
              const Resume &resume);

  // The contiguous run of converged J-V points (sorted by voltage) that
  // holds the point nearest to short circuit: a failed point beyond it on
  // either side cuts the curve there, so no metric is taken across it.
  std::vector<JVPoint> converged_curve(const JVScan &s);
} // namespace backcomb::fem
