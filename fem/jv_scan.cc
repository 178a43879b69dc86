#include "fem/jv_scan.h"

#include "base/format.h"

#include <algorithm>
#include <chrono>
#include <cmath>

namespace backcomb::fem
{
  namespace
  {
    double
    seconds_since(const std::chrono::steady_clock::time_point t0)
    {
      return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    }

    ScanPoint
    replayed(const StoredPoint &q)
    {
      ScanPoint p;
      p.jv       = {q.voltage, q.current, true, q.newton};
      p.halvings = q.halvings;
      p.state    = q.state;
      return p;
    }

    void
    save(const Resume &resume, const std::string &label, const ScanPoint &p)
    {
      if (resume.store)
        resume.store->save({label, p.jv.voltage, p.jv.current, p.jv.newton_iterations, p.halvings, p.state});
    }

    void
    sort_by_voltage(JVScan &s)
    {
      std::sort(s.points.begin(), s.points.end(),
                [](const ScanPoint &a, const ScanPoint &b) { return a.jv.voltage < b.jv.voltage; });
    }

    // Points of the predictor: Lagrange extrapolation through the last five
    // converged states. Measured on the short-film case at 50 um, first
    // update of a 20 mV bias step (kT/q) and Newton/chord steps per bias of the
    // 141-bias J-V: three points 4e-5, 4.6 steps; four 2e-6, 3.5; five
    // 1e-7, 2.3; six 2.1 steps. Where the state is not smooth in the bias
    // (a failed step, a kink) the solve falls back to the last state.
    constexpr std::size_t predictor_points = 5;

    // The last converged points of a scan side, newest last.
    struct History
    {
      std::vector<double>                 v;
      std::vector<dealii::Vector<double>> u;
      void
      push(const double voltage, const dealii::Vector<double> &state)
      {
        if (v.size() == predictor_points)
          v.erase(v.begin()), u.erase(u.begin());
        v.push_back(voltage);
        u.push_back(state);
      }
    };

    // A first try from the solution extrapolated through the previous
    // points (Lagrange polynomial through up to `predictor_points`: the
    // error of the guess falls with the fifth power of the bias step, so
    // that the first chord step starts close to the solution); on failure
    // the last converged state and step halving.
    StepReport
    predicted_step(DriftDiffusionSolver &solver, const History &h, const double v, const double light,
                   const unsigned max_halvings)
    {
      if (h.v.size() < 2)
        return move_to(solver, v, light, max_halvings);
      return solve_from_guess(solver, extrapolated(h.v, h.u, v), h.u.back(), h.v.back(), light, v, light,
                              max_halvings);
    }

    // One side of a scan, in the given order, from the solver's state.
    void
    scan_side(DriftDiffusionSolver &solver, const std::vector<double> &biases, double light,
              unsigned max_halvings, JVScan &out, const ProgressLine &progress, const std::string &label,
              const Resume &resume, bool extend_to_voc, double step, History history)
    {
      const auto             t0 = std::chrono::steady_clock::now();
      std::vector<double>    todo(biases.rbegin(), biases.rend());
      double                 extended = 0;
      while (!todo.empty())
        {
          const double v = todo.back();
          todo.pop_back();
          ScanPoint p;
          if (const StoredPoint *q = resume.find(label, v))
            {
              p = replayed(*q);
              solver.set_state(p.state, v, light);
            }
          else
            {
              const StepReport r = predicted_step(solver, history, v, light, max_halvings);
              p.jv.voltage           = v;
              p.jv.converged         = r.converged;
              p.jv.newton_iterations = r.newton_iterations;
              p.halvings             = r.halvings;
              if (!r.converged)
                {
                  out.newton += r.newton_iterations;
                  out.halvings += r.halvings;
                  out.failures.push_back(label + ": " + r.diagnostic);
                  out.points.push_back(p);
                  break;
                }
              p.jv.current = solver.terminal_current().total();
              p.state      = solver.state();
              save(resume, label, p);
            }
          out.newton += p.jv.newton_iterations;
          out.halvings += p.halvings;
          history.push(v, p.state);
          out.points.push_back(p);
          if (progress)
            progress(label + ": V = " + format_fixed(v, 3) + " V, J = " + format_fixed(p.jv.current, 3) +
                     " mA/cm2, " + std::to_string(p.jv.newton_iterations) + " Newton steps");
          if (todo.empty() && extend_to_voc && v > 0 && p.jv.current > 0 && extended < 1.0)
            {
              todo.push_back(v + step);
              extended += step;
            }
        }
      out.seconds += seconds_since(t0);
    }
  } // namespace

  const StoredPoint *
  Resume::find(const std::string &label, const double v) const
  {
    for (const auto &p : stored)
      if (p.sweep == label && std::abs(p.voltage - v) < 1e-9)
        return &p;
    return nullptr;
  }

  StepReport
  start_state(DriftDiffusionSolver &solver, const double light, const unsigned max_halvings,
              const std::string &label, const Resume &resume, const ProgressLine &stage,
              const StateHook &after_equilibrium)
  {
    if (const StoredPoint *q = resume.find(label + "-start", 0.0))
      {
        if (stage)
          stage("equilibrium" + std::string(light > 0 ? " and light ramp" : "") + ": taken from the checkpoint");
        solver.set_state(q->state, 0.0, light);
        StepReport r;
        r.converged         = true;
        r.newton_iterations = q->newton;
        r.halvings          = q->halvings;
        return r;
      }
    const StepReport r = illuminate(solver, light, max_halvings, stage, after_equilibrium);
    if (r.converged)
      {
        ScanPoint p;
        p.jv       = {0.0, 0.0, true, r.newton_iterations};
        p.halvings = r.halvings;
        p.state    = solver.state();
        save(resume, label + "-start", p);
      }
    return r;
  }

  void
  scan(DriftDiffusionSolver &solver, const std::vector<double> &biases, const bool reverse, const double light,
       const double step, const unsigned max_halvings, JVScan &out, const ProgressLine &progress,
       const std::string &label, const Resume &resume)
  {
    std::vector<double> up, down;
    for (const double v : biases)
      (v >= 0 ? up : down).push_back(v);
    std::reverse(down.begin(), down.end());
    const dealii::Vector<double> start = solver.state();
    const double                 v0    = solver.voltage();
    auto run = [&](const std::vector<double> &b) {
      solver.set_state(start, v0, light);
      const bool up_side = !b.empty() && b.back() >= 0;
      // The second side's predictor starts from the first side's points
      // nearest the start (0 V first of all), newest nearest: its first
      // biases are then extrapolated instead of solved from the start alone.
      History seed;
      std::vector<const ScanPoint *> near;
      for (const auto &p : out.points)
        if (p.jv.converged && p.state.size() > 0 && (p.jv.voltage >= 0) != up_side)
          near.push_back(&p);
      std::sort(near.begin(), near.end(), [v0](const ScanPoint *a, const ScanPoint *c) {
        return std::abs(a->jv.voltage - v0) > std::abs(c->jv.voltage - v0);
      });
      if (near.size() > predictor_points)
        near.erase(near.begin(), near.end() - predictor_points);
      for (const ScanPoint *p : near)
        seed.push(p->jv.voltage, p->state);
      scan_side(solver, b, light, max_halvings, out, progress, label, resume, light > 0 && up_side, step, seed);
    };
    if (reverse)
      run(down), run(up);
    else
      run(up), run(down);
    sort_by_voltage(out);
  }

  bool
  solve_near(DriftDiffusionSolver &solver, JVScan &s, const double v, const double light,
             const unsigned max_halvings, const Resume &resume)
  {
    auto insert = [&s](ScanPoint p) {
      s.newton += p.jv.newton_iterations;
      s.halvings += p.halvings;
      s.points.push_back(std::move(p));
      sort_by_voltage(s);
    };
    if (const StoredPoint *q = resume.find("light", v))
      {
        ScanPoint p = replayed(*q);
        solver.set_state(p.state, v, light);
        insert(std::move(p));
        return true;
      }
    const ScanPoint *best = nullptr;
    for (const auto &p : s.points)
      if (p.jv.converged && (!best || std::abs(p.jv.voltage - v) < std::abs(best->jv.voltage - v)))
        best = &p;
    if (!best)
      return false;
    solver.set_state(best->state, best->jv.voltage, light);
    const StepReport r = move_to(solver, v, light, max_halvings);
    if (!r.converged)
      {
        s.newton += r.newton_iterations;
        s.halvings += r.halvings;
        return false;
      }
    ScanPoint p;
    p.jv       = {v, solver.terminal_current().total(), true, r.newton_iterations};
    p.halvings = r.halvings;
    p.state    = solver.state();
    save(resume, "light", p);
    insert(std::move(p));
    return true;
  }

  bool
  go_to(DriftDiffusionSolver &solver, JVScan &s, const double v, const unsigned max_halvings,
        const Resume &resume)
  {
    const auto stored = std::find_if(s.points.begin(), s.points.end(), [v](const ScanPoint &p) {
      return p.jv.converged && std::abs(p.jv.voltage - v) < 1e-9;
    });
    if (stored != s.points.end())
      {
        solver.set_state(stored->state, v, 1.0);
        return true;
      }
    return solve_near(solver, s, v, 1.0, max_halvings, resume);
  }

  std::vector<JVPoint>
  converged_curve(const JVScan &s)
  {
    std::size_t k = s.points.size();
    for (std::size_t i = 0; i < s.points.size(); ++i)
      if (s.points[i].jv.converged &&
          (k == s.points.size() || std::abs(s.points[i].jv.voltage) < std::abs(s.points[k].jv.voltage)))
        k = i;
    if (k == s.points.size())
      return {};
    std::size_t first = k, last = k;
    while (first > 0 && s.points[first - 1].jv.converged)
      --first;
    while (last + 1 < s.points.size() && s.points[last + 1].jv.converged)
      ++last;
    std::vector<JVPoint> c;
    for (std::size_t i = first; i <= last; ++i)
      c.push_back(s.points[i].jv);
    return c;
  }

  void
  refine(DriftDiffusionSolver &solver, JVScan &s, const double resolution, const unsigned max_halvings,
         const Resume &resume)
  {
    const auto t0 = std::chrono::steady_clock::now();
    // The maximum power point: halve the wider of its two intervals.
    for (int pass = 0; pass < 40; ++pass)
      {
        const auto c = converged_curve(s);
        if (c.size() < 3)
          break;
        std::size_t b = 0;
        for (std::size_t i = 0; i < c.size(); ++i)
          if (c[i].voltage * c[i].current > c[b].voltage * c[b].current)
            b = i;
        if (b == 0 || b + 1 >= c.size())
          break;
        const double left = c[b].voltage - c[b - 1].voltage, right = c[b + 1].voltage - c[b].voltage;
        if (std::max(left, right) <= resolution)
          break;
        const double v = left > right ? c[b].voltage - 0.5 * left : c[b].voltage + 0.5 * right;
        if (!solve_near(solver, s, v, 1.0, max_halvings, resume))
          break;
      }
    // Open circuit: regula falsi on the sign change of the current.
    for (int it = 0; it < 30; ++it)
      {
        const auto  c = converged_curve(s);
        std::size_t k = c.size();
        for (std::size_t i = 0; i + 1 < c.size(); ++i)
          if (c[i].current > 0 && c[i + 1].current <= 0)
            k = i;
        if (k == c.size() || c[k + 1].voltage - c[k].voltage < 1e-4)
          break;
        double v = c[k].voltage + c[k].current / (c[k].current - c[k + 1].current) *
                                    (c[k + 1].voltage - c[k].voltage);
        // Keep away from the bracket ends so that the bracket shrinks.
        const double w = c[k + 1].voltage - c[k].voltage;
        v              = std::clamp(v, c[k].voltage + 0.05 * w, c[k + 1].voltage - 0.05 * w);
        if (!solve_near(solver, s, v, 1.0, max_halvings, resume))
          break;
      }
    s.seconds += seconds_since(t0);
  }
} // namespace backcomb::fem
