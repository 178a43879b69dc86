#include "fem/ion_scan.h"

#include <deal.II/base/mpi.h>
#include <deal.II/fe/fe.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

namespace backcomb::fem
{
  namespace
  {
    // The shortest time scale of the ions: the dielectric relaxation of the
    // ion gas, eps / (q mu_c z^2 N) = L_D^2 / D (s).
    double
    ionic_relaxation_time(const DeviceModel &d)
    {
      double tau = std::numeric_limits<double>::infinity();
      for (const auto &[id, r] : d.regions)
        if (r.ion_density > 0)
          tau = std::min(tau, r.eps / (r.ion_z * r.ion_z * r.ion_density * r.ion_mu) * d.scaling.t0);
      return tau;
    }

    class Stepper
    {
    public:
      Stepper(DriftDiffusionSolver &s, const HysteresisSettings &settings, HysteresisScan &result)
        : solver(s)
        , settings(settings)
        , result(result)
        , dt(0.1 * ionic_relaxation_time(s.device_model()))
      {}

      // Advances by `duration` (s) with the bias ramped linearly from the
      // present one to `v_end`. Step lengths: the ions' potential at the end
      // of a step must differ from its linear extrapolation through the two
      // states before it by at most the tolerance (the local error of a
      // first-order method, so a conservative bound for BDF2), weighted by
      // c / (c + N_ion) (DriftDiffusionSolver::ion_weight()); a step that
      // exceeds it or fails to converge is repeated shorter.
      bool
      advance(const double duration, const double v_end, const bool scanning)
      {
        const double v_start = solver.voltage();
        double       t       = 0;
        unsigned     failures_in_a_row = 0;
        while (t < duration * (1 - 1e-12))
          {
            double h = std::min(dt, duration - t);
            // No sliver of a step at the end.
            if (duration - t - h < 0.2 * h)
              h = duration - t;
            const double                                  v    = v_start + (v_end - v_start) * (t + h) / duration;
            const dealii::Vector<double>                  old  = solver.state();
            const DriftDiffusionSolver::TransientHistory  hist = solver.transient_history();
            const double                                  v_old = solver.voltage();
            // Linear extrapolation through the last two states: Newton's
            // start, and what the error estimate compares with.
            dealii::Vector<double> predicted;
            if (hist.previous_dt > 0)
              {
                const double w = h / hist.previous_dt;
                predicted      = old;
                predicted.sadd(1 + w, -w, hist.previous);
              }
            const NewtonReport rep =
              solver.solve_time_step(v, settings.light, h, predicted.size() > 0 ? &predicted : nullptr);
            result.newton_iterations += rep.iterations;
            // The error in ln c weighted by c / (c + N_ion): the relative
            // error of the ion density where they pile up, its error against
            // N_ion where they are depleted (where phi_c itself is nearly
            // free and tells nothing about the charge).
            double error = 0;
            if (rep.converged && predicted.size() > 0)
              {
                const dealii::Vector<double> &u = solver.state();
                for (const DriftDiffusionSolver::IonNode &k : solver.ion_nodes())
                  error = std::max(error, DriftDiffusionSolver::ion_weight(u, k) * std::abs(u[k.ion] - predicted[k.ion]));
              }
            if (!rep.converged || error > settings.tolerance)
              {
                ++result.rejected;
                if (rep.converged)
                  {
                    // Undo the step.
                    solver.set_state(old, v_old, settings.light);
                    solver.set_transient_history(hist);
                  }
                if (++failures_in_a_row > 4 * settings.max_halvings)
                  {
                    std::ostringstream m;
                    m << "the ions' time step could not be completed at V = " << v << " V (dt = " << h
                      << " s; " << (rep.converged ? "error estimate above the tolerance" : "Newton did not converge")
                      << ")";
                    result.diagnostic = m.str();
                    return false;
                  }
                // At most 0.8 h, so that the next try is shorter even where
                // the end of the interval would round it up.
                dt = rep.converged ? h * std::clamp(0.9 * std::sqrt(settings.tolerance / error), 0.2, 0.8) : 0.25 * h;
                continue;
              }
            failures_in_a_row = 0;
            ++result.time_steps;
            if (scanning)
              {
                result.smallest_dt = result.smallest_dt > 0 ? std::min(result.smallest_dt, h) : h;
                result.largest_dt  = std::max(result.largest_dt, h);
              }
            t += h;
            const double grow = error > 0 ? std::min(2.0, 0.9 * std::sqrt(settings.tolerance / error)) : 2.0;
            dt                = std::max(h * grow, 1e-15);
          }
        return true;
      }

    private:
      DriftDiffusionSolver &solver;
      const HysteresisSettings   &settings;
      HysteresisScan           &result;
      double                dt; // next step to try, s
    };
  } // namespace

  double
  hysteresis_index(const JVMetrics &reverse, const JVMetrics &forward)
  {
    if (!reverse.valid || !forward.valid || !(reverse.Pmax > 0))
      return std::numeric_limits<double>::quiet_NaN();
    return (reverse.Pmax - forward.Pmax) / reverse.Pmax;
  }

  HysteresisScan
  scan_with_ions(DriftDiffusionSolver &solver, const HysteresisSettings &settings, const HysteresisObserver &observe)
  {
    HysteresisScan result;
    result.hysteresis_index = std::numeric_limits<double>::quiet_NaN();
    if (!solver.has_ions())
      throw std::logic_error("scan_with_ions: the device has no mobile ions");
    if (!(settings.rate > 0) || !(settings.step > 0) || !(settings.high > settings.low))
      throw std::invalid_argument("scan_with_ions: rate and step must be positive and low < high");
    const double number_start = solver.ion_number(solver.state());
    solver.begin_transient();
    Stepper stepper(solver, settings, result);

    // At t = 0 the light comes on and the bias jumps to the preconditioning
    // bias, faster than the ions can follow (instantaneous solves): the
    // light decade by decade at the starting bias, then the bias in steps
    // of at most 0.1 V (a jump of a volt in one solve takes hundreds of
    // Newton steps of step halving).
    auto jump = [&](const double v, const double light) {
      const double   from = solver.voltage();
      const unsigned n    = static_cast<unsigned>(std::ceil(std::abs(v - from) / 0.1 - 1e-9));
      dealii::Vector<double> older, old;
      for (unsigned k = 1; k <= std::max(n, 1u); ++k)
        {
          // Past the first two steps, from the state extrapolated linearly
          // through the last two (equal bias steps).
          const double vk = k >= n ? v : from + (v - from) * k / n, v_old = solver.voltage();
          older           = std::move(old);
          old             = solver.state();
          StepReport r;
          if (older.size() > 0)
            {
              dealii::Vector<double> guess = old;
              guess.sadd(2.0, -1.0, older);
              r = solve_from_guess(solver, guess, old, v_old, light, vk, light, settings.max_halvings);
            }
          else
            r = move_to(solver, vk, light, settings.max_halvings);
          result.newton_iterations += r.newton_iterations;
          if (!r.converged)
            {
              result.diagnostic = r.diagnostic;
              return false;
            }
        }
      return true;
    };
    for (int e = -8; e <= 0; ++e)
      if (!jump(solver.voltage(), settings.light * std::pow(10.0, e)))
        return result;
    if (!jump(settings.precondition_bias, settings.light))
      return result;
    if (settings.precondition_time > 0 &&
        !stepper.advance(settings.precondition_time, settings.precondition_bias, false))
      return result;
    if (observe)
      observe("preconditioned", HysteresisPoint{0, solver.voltage(), solver.terminal_current().total(), true});

    double time = 0;
    for (const std::string &direction : settings.directions)
      {
        const bool   reverse = direction == "reverse";
        if (!reverse && direction != "forward")
          throw std::invalid_argument("scan_with_ions: direction '" + direction + "'");
        const double from    = reverse ? settings.high : settings.low;
        const double to      = reverse ? settings.low : settings.high;
        // A curve starts where the last one ended, or after a jump.
        if (std::abs(solver.voltage() - from) > 1e-12 && !jump(from, settings.light))
          return result;
        HysteresisCurve curve;
        curve.direction = direction;
        const unsigned n = static_cast<unsigned>(std::ceil((settings.high - settings.low) / settings.step - 1e-9));
        for (unsigned k = 0; k <= n; ++k)
          {
            if (k > 0)
              {
                const double v  = k == n ? to : from + (reverse ? -1.0 : 1.0) * settings.step * k;
                const double dt = std::abs(v - solver.voltage()) / settings.rate;
                if (!stepper.advance(dt, v, true))
                  return result;
                time += dt;
              }
            const HysteresisPoint p{time, solver.voltage(), solver.terminal_current().total(), true};
            curve.points.push_back(p);
            if (observe)
              observe(direction, p);
          }
        std::vector<JVPoint> sorted;
        for (const HysteresisPoint &p : curve.points)
          sorted.push_back({p.voltage, p.current, true, 0});
        std::sort(sorted.begin(), sorted.end(),
                  [](const JVPoint &a, const JVPoint &b) { return a.voltage < b.voltage; });
        curve.metrics = jv_metrics(sorted);
        result.curves.push_back(curve);
      }
    const HysteresisCurve *rev = nullptr, *fwd = nullptr;
    for (const HysteresisCurve &c : result.curves)
      (c.direction == "reverse" ? rev : fwd) = &c;
    if (rev && fwd)
      result.hysteresis_index = hysteresis_index(rev->metrics, fwd->metrics);
    result.ion_number_drift = std::abs(solver.ion_number(solver.state()) / number_start - 1);
    result.converged        = true;
    return result;
  }
} // namespace backcomb::fem
