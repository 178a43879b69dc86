#include "fem/operating_points.h"

#include <algorithm>
#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  namespace
  {
    std::string
    describe_failure(const NewtonReport &r, double voltage, double light)
    {
      std::ostringstream s;
      s << "Newton did not converge at V = " << voltage << " V, light factor " << light
        << " after " << r.iterations - r.chord_attempt_iterations << " steps; largest update per step (kT/q):";
      for (const double u : r.update_history)
        s << ' ' << u;
      s << "; last largest update at x = " << r.worst_x << " um, y = " << r.worst_y << " um";
      if (r.chord_attempt_iterations > 0)
        s << "; a first attempt of " << r.chord_attempt_iterations
          << " steps reusing factorisations did not converge either";
      return s.str();
    }
  } // namespace

  StepReport
  move_to(DriftDiffusionSolver &solver, const double voltage, const double light, const unsigned max_halvings)
  {
    StepReport rep;
    // Targets still to reach, the last one first out; a failed step puts
    // its midpoint in front of it.
    std::vector<std::pair<double, double>> targets{{voltage, light}};
    unsigned depth = 0;
    while (!targets.empty())
      {
        const auto [v, s] = targets.back();
        const NewtonReport r = solver.solve(v, s);
        rep.newton_iterations += r.iterations;
        if (r.converged)
          {
            targets.pop_back();
            depth = 0;
            continue;
          }
        if (depth >= max_halvings)
          {
            rep.diagnostic = describe_failure(r, v, s) + "; gave up after " +
                             std::to_string(max_halvings) + " step halvings";
            return rep;
          }
        ++depth;
        ++rep.halvings;
        targets.emplace_back(0.5 * (solver.voltage() + v), 0.5 * (solver.light() + s));
      }
    rep.converged = true;
    return rep;
  }

  dealii::Vector<double>
  extrapolated(const std::vector<double> &x, const std::vector<dealii::Vector<double>> &u, const double at)
  {
    dealii::Vector<double> guess(u.back().size());
    for (std::size_t i = 0; i < x.size(); ++i)
      {
        double w = 1;
        for (std::size_t j = 0; j < x.size(); ++j)
          if (j != i)
            w *= (at - x[j]) / (x[i] - x[j]);
        guess.add(w, u[i]);
      }
    return guess;
  }

  StepReport
  solve_from_guess(DriftDiffusionSolver &solver, const dealii::Vector<double> &guess,
                   const dealii::Vector<double> &last, const double last_voltage, const double last_light,
                   const double voltage, const double light, const unsigned max_halvings)
  {
    // A good guess converges in a few steps (chord steps included); one
    // that needs many more is abandoned early for the start from `last`.
    constexpr unsigned predictor_budget = 30;
    solver.set_state(guess, voltage, light);
    const NewtonReport n = solver.solve(voltage, light, predictor_budget);
    StepReport         r;
    r.newton_iterations = n.iterations;
    r.converged         = n.converged;
    if (!r.converged)
      {
        solver.set_state(last, last_voltage, last_light);
        const StepReport again = move_to(solver, voltage, light, max_halvings);
        r.converged            = again.converged;
        r.halvings             = again.halvings;
        r.diagnostic           = again.diagnostic;
        r.newton_iterations += again.newton_iterations;
      }
    return r;
  }

  StepReport
  illuminate(DriftDiffusionSolver &solver, const double light, const unsigned max_halvings,
             const std::function<void(const std::string &)> &stage,
             const StateHook &after_equilibrium)
  {
    StepReport         rep;
    const NewtonReport eq = solver.solve_equilibrium();
    rep.newton_iterations = eq.iterations;
    if (!eq.converged)
      {
        rep.diagnostic = "equilibrium: " + describe_failure(eq, 0, 0);
        return rep;
      }
    if (stage)
      stage("equilibrium: converged in " + std::to_string(eq.iterations) + " Newton steps");
    if (after_equilibrium)
      after_equilibrium(solver.state());
    // The ramp raises the generation decade by decade, from 1e-5 of the
    // full light (measured on the two shipped films at gaps of 5 to 200 um:
    // 92 to 130 Newton steps, against 122 to 155 from 1e-8; a start at 1e-4
    // or 1e-3 made some gaps several times slower). If the first level
    // fails, the ramp starts again from equilibrium at 1e-8.
    // Past the first two decades each one starts from the state
    // extrapolated linearly in log(light) through the two before it (the
    // quasi-Fermi levels of the photogenerated carriers move by about
    // kT/q ln 10 per decade); if Newton fails from there, the decade is
    // taken from the last state with step halving.
    const dealii::Vector<double> dark_state = solver.state();
    auto ramp = [&](const int first_decade, bool &first_failed) {
      dealii::Vector<double> older, old;
      for (int e = first_decade; e <= 0; ++e)
        {
          const double level = light * std::pow(10.0, e);
          StepReport   r;
          if (older.size() > 0)
            {
              dealii::Vector<double> guess = old;
              guess.sadd(2.0, -1.0, older);
              r = solve_from_guess(solver, guess, old, 0.0, level / 10, 0.0, level, max_halvings);
            }
          else
            r = move_to(solver, 0.0, level, max_halvings);
          rep.newton_iterations += r.newton_iterations;
          rep.halvings += r.halvings;
          if (!r.converged)
            {
              first_failed   = e == first_decade;
              rep.diagnostic = "light ramp: " + r.diagnostic;
              return false;
            }
          older = old;
          old   = solver.state();
        }
      return true;
    };
    int decades = 0;
    if (light > 0)
      {
        bool first_failed = false;
        decades           = 6;
        if (!ramp(-5, first_failed))
          {
            if (!first_failed)
              return rep;
            solver.set_state(dark_state, 0.0, 0.0);
            first_failed = false;
            decades      = 9;
            if (!ramp(-8, first_failed))
              return rep;
            rep.diagnostic.clear();
          }
      }
    if (stage && light > 0)
      stage("light ramp: generation raised from 1e-" + std::to_string(decades - 1) +
            " to 1 times the full light, a decade per step (" + std::to_string(decades) + " steps), " +
            std::to_string(rep.newton_iterations - eq.iterations) + " Newton steps");
    rep.converged = true;
    return rep;
  }

  std::vector<OpenCircuit>
  open_circuits(DriftDiffusionSolver &solver, std::vector<double> levels, double slope,
                const unsigned max_halvings, const double tolerance_V)
  {
    std::sort(levels.rbegin(), levels.rend());
    const double Vt = solver.device_model().scaling.Vt;
    // Converged points of the last level and of the one before (or the
    // start): ln(light), V_oc, state.
    struct Anchor
    {
      double                 log_light, voltage;
      dealii::Vector<double> state;
    };
    std::vector<Anchor>      anchors{{std::log(solver.light()), solver.voltage(), solver.state()}};
    std::vector<OpenCircuit> out;
    for (const double s : levels)
      {
        OpenCircuit  oc;
        oc.light         = s;
        const Anchor &a  = anchors.back();
        const double  ls = std::log(s);
        // The first point: predicted from the last two levels (or, from
        // the start, the ideal diode's shift of V_oc by kT/q ln ratio).
        double                 v = a.voltage + Vt * (ls - a.log_light);
        dealii::Vector<double> guess = a.state;
        if (anchors.size() >= 2 && anchors[anchors.size() - 2].log_light != a.log_light)
          {
            const Anchor &b = anchors[anchors.size() - 2];
            const double  t = (ls - a.log_light) / (a.log_light - b.log_light);
            v               = a.voltage + t * (a.voltage - b.voltage);
            guess           = extrapolated({b.log_light, a.log_light}, {b.state, a.state}, ls);
          }
        // The secant's points, newest last: voltage, current, state.
        std::vector<double>                 vs, js;
        std::vector<dealii::Vector<double>> us;
        // On failure from the guess: from the last point of this level, or
        // from the level before.
        auto solve_at = [&](const double vv, const dealii::Vector<double> &g) {
          const StepReport r = us.empty() ?
                                 solve_from_guess(solver, g, a.state, a.voltage, std::exp(a.log_light), vv, s,
                                                  max_halvings) :
                                 solve_from_guess(solver, g, us.back(), vs.back(), s, vv, s, max_halvings);
          oc.newton_iterations += r.newton_iterations;
          if (!r.converged)
            {
              oc.diagnostic = r.diagnostic;
              return false;
            }
          vs.push_back(vv);
          js.push_back(solver.terminal_current().total());
          us.push_back(solver.state());
          return true;
        };
        // This level's slope at its start: the last one scaled by the light
        // ratio (at open circuit the diode's dJ/dV is proportional to it).
        const double level_slope = slope * s / std::exp(a.log_light);
        bool         ok          = solve_at(v, guess);
        for (int it = 0; ok && it < 30; ++it)
          {
            const std::size_t k = vs.size() - 1;
            if (k > 0 && std::abs(vs[k] - vs[k - 1]) < tolerance_V)
              {
                oc.converged = true;
                oc.voltage   = vs[k];
                break;
              }
            double            g = level_slope;
            if (k > 0 && js[k] != js[k - 1] && vs[k] != vs[k - 1])
              g = (js[k] - js[k - 1]) / (vs[k] - vs[k - 1]);
            if (!(g < 0))
              {
                oc.diagnostic = "open circuit at light factor " + std::to_string(s) +
                                ": the current does not fall with the voltage near " + std::to_string(vs[k]) +
                                " V";
                ok = false;
                break;
              }
            // Limited to 0.1 V so that a flat stretch cannot throw it far.
            const double next = std::clamp(vs[k] - js[k] / g, vs[k] - 0.1, vs[k] + 0.1);
            ok = solve_at(next, k > 0 ? extrapolated({vs[k - 1], vs[k]}, {us[k - 1], us[k]}, next) : us[k]);
          }
        if (ok && !oc.converged)
          oc.diagnostic = "open circuit at light factor " + std::to_string(s) +
                          ": the secant iteration did not settle (last bias " + std::to_string(vs.back()) + " V)";
        out.push_back(oc);
        if (!oc.converged)
          break;
        slope = next_level_slope(vs, js, level_slope);
        if (anchors.size() == 2)
          anchors.erase(anchors.begin());
        anchors.push_back({ls, oc.voltage, us.back()});
      }
    return out;
  }

  double
  next_level_slope(const std::vector<double> &v, const std::vector<double> &j, const double level_slope)
  {
    const double dv = v.empty() ? 0.0 : v.back() - v.front();
    return std::abs(dv) > 1e-3 ? (j.back() - j.front()) / dv : level_slope;
  }

  double
  slope_at_open_circuit(const std::vector<JVPoint> &c)
  {
    for (std::size_t i = 0; i + 1 < c.size(); ++i)
      if (c[i].current > 0 && c[i + 1].current <= 0)
        return (c[i + 1].current - c[i].current) / (c[i + 1].voltage - c[i].voltage);
    return 0;
  }

  JVMetrics
  jv_metrics(const std::vector<JVPoint> &c)
  {
    JVMetrics m;
    if (c.size() < 3)
      return m;
    for (const auto &p : c)
      if (!p.converged)
        return m;
    // Jsc: interpolate J at V = 0.
    bool have_jsc = false, have_voc = false;
    for (std::size_t i = 0; i + 1 < c.size(); ++i)
      {
        const auto &a = c[i], &b = c[i + 1];
        if (!have_jsc && a.voltage <= 0 && b.voltage >= 0)
          {
            const double t = (0 - a.voltage) / (b.voltage - a.voltage);
            m.Jsc          = a.current + t * (b.current - a.current);
            have_jsc       = true;
          }
        if (!have_voc && a.current > 0 && b.current <= 0)
          {
            const double t = a.current / (a.current - b.current);
            m.Voc          = a.voltage + t * (b.voltage - a.voltage);
            have_voc       = true;
          }
      }
    if (!have_jsc || !have_voc || m.Jsc <= 0)
      return m;
    std::size_t best = 0;
    for (std::size_t i = 0; i < c.size(); ++i)
      if (c[i].voltage * c[i].current > c[best].voltage * c[best].current)
        best = i;
    m.Vmp  = c[best].voltage;
    m.Jmp  = c[best].current;
    m.Pmax = m.Vmp * m.Jmp;
    if (best > 0 && best + 1 < c.size())
      {
        // Parabola through three (V, P) points.
        const double x0 = c[best - 1].voltage, x1 = c[best].voltage, x2 = c[best + 1].voltage;
        const double y0 = x0 * c[best - 1].current, y1 = m.Pmax, y2 = x2 * c[best + 1].current;
        const double d  = (x0 - x1) * (x0 - x2) * (x1 - x2);
        const double A  = (x2 * (y1 - y0) + x1 * (y0 - y2) + x0 * (y2 - y1)) / d;
        const double B  = (x2 * x2 * (y0 - y1) + x1 * x1 * (y2 - y0) + x0 * x0 * (y1 - y2)) / d;
        const double C  = (x1 * x2 * (x1 - x2) * y0 + x2 * x0 * (x2 - x0) * y1 + x0 * x1 * (x0 - x1) * y2) / d;
        if (A < 0)
          {
            const double v = -B / (2 * A);
            if (v > x0 && v < x2)
              {
                m.Vmp  = v;
                m.Pmax = A * v * v + B * v + C;
                m.Jmp  = m.Pmax / v;
              }
          }
      }
    m.FF    = m.Pmax / (m.Jsc * m.Voc);
    m.valid = true;
    return m;
  }
} // namespace backcomb::fem
