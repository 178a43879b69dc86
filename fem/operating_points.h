// Continuation and operating points: equilibrium -> light ramp -> bias
// steps, halving a step when Newton fails, and the J-V metrics.
#pragma once

#include "fem/drift_diffusion.h"

#include <functional>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // Outcome of reaching one operating point.
  struct StepReport
  {
    bool        converged  = false;
    unsigned    newton_iterations = 0; // summed over all attempts
    unsigned    halvings   = 0;
    std::string diagnostic;            // why it failed (bias, update history, where)
  };

  // The state at x extrapolated (or interpolated) by the Lagrange
  // polynomial through the states u[i] at x[i] (distinct x; at least one).
  dealii::Vector<double> extrapolated(const std::vector<double> &x, const std::vector<dealii::Vector<double>> &u,
                                      double at);

  // Solves at (voltage, light) from the first guess `guess` (a predictor);
  // if Newton fails from there, moves to it with move_to() from the last
  // converged state `last` at (last_voltage, last_light).
  StepReport solve_from_guess(DriftDiffusionSolver &solver, const dealii::Vector<double> &guess,
                              const dealii::Vector<double> &last, double last_voltage, double last_light,
                              double voltage, double light, unsigned max_halvings);

  // Moves the solver from its current state to (voltage, light), first in
  // one step, then by halving the step from the last converged state, at
  // most `max_halvings` times in a row.
  StepReport move_to(DriftDiffusionSolver &solver,
                     double voltage,
                     double light,
                     unsigned max_halvings);

  // Called with a converged state (may do nothing).
  using StateHook = std::function<void(const dealii::Vector<double> &)>;

  // Equilibrium, then the generation switched on in decades (1e-5, 1e-4,
  // ..., 1, or from 1e-8 where 1e-5 fails) times `light`, at zero bias.
  // `stage`, if set, hears one line when equilibrium and one when the
  // light ramp is done; `after_equilibrium` is called with the equilibrium
  // state as soon as it has converged (the dark J-V's thread starts from
  // it).
  StepReport illuminate(DriftDiffusionSolver &solver, double light, unsigned max_halvings,
                        const std::function<void(const std::string &)> &stage = {},
                        const StateHook &after_equilibrium = {});

  // The open circuit at one light level (open_circuits).
  struct OpenCircuit
  {
    bool        converged = false;
    double      light     = 0;
    double      voltage   = 0;
    unsigned    newton_iterations = 0;
    std::string diagnostic;
  };

  // Open circuit at each light factor of `levels`, from the largest down,
  // starting from the solver's state near open circuit at its own light
  // factor, where the J-V has the slope `slope` (dJ/dV, mA/cm^2/V, < 0;
  // e.g. from the scanned points either side of V_oc). Each level is a
  // secant iteration to `tolerance_V` whose first point is predicted from
  // the levels before (state and V_oc extrapolated linearly in ln light)
  // and whose second point is one step of Newton's method in V with the
  // slope of the level before, scaled by the light ratio (at open circuit
  // the diode's dJ/dV is proportional to the light); later points start
  // from the state extrapolated through the last two. Stops at the first
  // level that fails: the points found, in the order solved, the last one
  // not converged.
  std::vector<OpenCircuit> open_circuits(DriftDiffusionSolver &solver, std::vector<double> levels, double slope,
                                         unsigned max_halvings, double tolerance_V = 1e-5);

  // The slope dJ/dV an open-circuit level hands to the next one, from its
  // secant points (voltages `v`, currents `j`, in the order solved): the
  // secant through the first and the last when they lie more than 1 mV
  // apart. Points closer than that (a level that starts at its own V_oc
  // closes on the second) differ in current only at the solver's tolerance,
  // so the level's own starting slope `level_slope` is handed on instead.
  double next_level_slope(const std::vector<double> &v, const std::vector<double> &j, double level_slope);

  struct JVPoint
  {
    double   voltage   = 0; // V
    double   current   = 0; // mA/cm^2 of footprint, generator convention
    bool     converged = false;
    unsigned newton_iterations = 0;
  };

  struct JVMetrics
  {
    bool   valid = false;   // false when a point they depend on failed
    double Jsc = 0, Voc = 0, FF = 0, Pmax = 0, Vmp = 0, Jmp = 0; // mA/cm^2, V, -, mW/cm^2
  };

  // dJ/dV (mA/cm^2/V) between the two points of a J-V table (sorted by
  // voltage) either side of open circuit; 0 if it has none.
  double slope_at_open_circuit(const std::vector<JVPoint> &curve);

  // Metrics from a converged J-V table (sorted by voltage). Voc by linear
  // interpolation of the sign change; the maximum power point by parabolic
  // interpolation through the best point and its neighbours.
  JVMetrics jv_metrics(const std::vector<JVPoint> &curve);
} // namespace backcomb::fem
