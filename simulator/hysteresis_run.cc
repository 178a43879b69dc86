#include "simulator/hysteresis_run.h"

#include "base/errors.h"
#include "base/format.h"
#include "fem/ion_scan.h"
#include "postprocess/pvd.h"
#include "simulator/guard_rails.h"

#include <deal.II/base/mpi.h>

#include <cmath>
#include <set>

namespace backcomb::simulator
{
  using json = nlohmann::json;

  namespace
  {
    std::vector<std::string>
    directions_of(const std::string &text)
    {
      if (text == "reverse then forward")
        return {"reverse", "forward"};
      if (text == "forward then reverse")
        return {"forward", "reverse"};
      return {text};
    }

  } // namespace

  json
  mobile_ions_json(const Case &c, const fem::DriftDiffusionSolver &solver)
  {
    if (!solver.has_ions())
      return nullptr;
    const auto       &a    = c.absorber;
    const IonicScales ions = ionic_scales(c);
    return {{"density_per_cm3", a.ion_density},
            {"charge_number", a.ion_charge},
            {"diffusion_coefficient_cm2_per_s", a.ion_diffusion},
            {"debye_length_nm", 1e3 * ions.debye_um},
            {"relaxation_time_s", ions.relaxation_s},
            {"gap_crossing_time_s", ions.gap_s},
            {"mean_density_of_state_per_cm3", solver.mean_ion_density()},
            {"model", "steady state at every bias of the J-V, collection map and losses (zero ionic current, "
                      "fixed number); see hysteresis_scan for a scan at a finite rate"}};
  }

  HysteresisOutput
  run_hysteresis_scan(fem::DriftDiffusionSolver &solver, const Case &c, const std::string &folder, const double light,
                      const bool write_fields, const std::function<void(const std::string &)> &progress)
  {
    HysteresisOutput out;
    const auto      &h = c.hysteresis;
    if (!(h.rate > 0) || !solver.has_ions())
      return out;
    out.ran = true;
    fem::HysteresisSettings s;
    s.rate              = h.rate;
    s.low               = c.jv.start;
    s.high              = c.jv.stop;
    s.step              = c.jv.step;
    s.light             = light;
    s.precondition_bias = h.precondition_bias;
    s.precondition_time = h.precondition_time;
    s.directions        = directions_of(h.directions);
    s.tolerance         = h.tolerance;
    s.max_halvings      = c.numerics.max_halvings;

    // Snapshots at evenly spaced biases of each direction (the scan
    // records n biases per direction).
    const unsigned     n = static_cast<unsigned>(std::ceil((s.high - s.low) / s.step - 1e-9)) + 1;
    std::set<unsigned> chosen;
    for (unsigned k = 0; k < h.snapshots; ++k)
      chosen.insert(h.snapshots == 1 ? 0u : static_cast<unsigned>(std::lround(double(k) * (n - 1) / (h.snapshots - 1))));
    std::vector<postprocess::PvdDataSet> listed;
    json                                 snapshots = json::array();
    std::string                          current_direction;
    unsigned                             index = 0;
    auto write = [&](const std::string &name, const double time, const double voltage) {
      try
        {
          solver.write_fields(folder + "/" + name);
        }
      catch (const std::exception &e)
        {
          throw OutputError(e.what());
        }
      snapshots.push_back({{"file", name}, {"time_s", time}, {"voltage_V", voltage}});
    };
    auto observe = [&](const std::string &direction, const fem::HysteresisPoint &p) {
      if (!write_fields)
        return;
      if (direction == "preconditioned")
        {
          write("fields/ions_preconditioned.vtu", p.time_s, p.voltage);
          return;
        }
      if (direction != current_direction)
        current_direction = direction, index = 0;
      if (chosen.count(index++) == 0)
        return;
      const std::string name = "fields/ions_" + direction + "_V" + format_fixed(p.voltage, 4) + ".vtu";
      write(name, p.time_s, p.voltage);
      // The turn between two directions is one state: listed once.
      if (listed.empty() || p.time_s > listed.back().time)
        listed.push_back({p.time_s, name});
    };

    progress("hysteresis scan: " + format_number(h.rate, 3) + " V/s, " + h.directions + ", after " +
             format_number(h.precondition_time, 3) + " s at " + format_number(h.precondition_bias, 4) + " V");
    const fem::NewtonReport eq = solver.solve_equilibrium();
    fem::HysteresisScan     r;
    if (eq.converged)
      r = fem::scan_with_ions(solver, s, observe);
    else
      r.diagnostic = "the dark equilibrium did not converge";
    solver.end_transient();
    if (write_fields && !listed.empty() && dealii::Utilities::MPI::this_mpi_process(solver.communicator()) == 0)
      postprocess::write_pvd(folder + "/ions.pvd", listed);

    const IonicScales ions   = ionic_scales(c);
    json              curves = json::array();
    for (const auto &curve : r.curves)
      {
        json points = json::array();
        std::vector<std::pair<double, double>> column;
        for (const auto &p : curve.points)
          {
            points.push_back({{"time_s", p.time_s}, {"voltage_V", p.voltage}, {"current_mA_per_cm2", p.current}});
            column.emplace_back(p.voltage, p.current);
          }
        curves.push_back({{"direction", curve.direction},
                          {"metrics", curve.metrics.valid
                                        ? postprocess::metrics_json(curve.metrics, curve.metrics.Jsc, std::nullopt,
                                                                    100.0 * c.illumination.intensity_suns)
                                        : json(nullptr)},
                          {"points", points}});
        out.columns.push_back({"J_" + curve.direction + "_scan_mA_per_cm2", column});
      }
    out.curves    = r.curves;
    out.converged = r.converged;
    out.summary   = {
      {"status", r.converged ? "converged" : "failed"},
      {"diagnostic", r.converged ? json(nullptr) : json(r.diagnostic)},
      {"scan_rate_V_per_s", h.rate},
      {"directions", h.directions},
      {"preconditioning", {{"bias_V", h.precondition_bias}, {"time_s", h.precondition_time}}},
      {"curves", curves},
      {"hysteresis_index", std::isfinite(r.hysteresis_index) ? json(r.hysteresis_index) : json(nullptr)},
      {"hysteresis_index_definition", "(Pmax_reverse - Pmax_forward) / Pmax_reverse"},
      {"time_steps", r.time_steps},
      {"rejected_steps", r.rejected},
      {"newton_iterations", r.newton_iterations},
      {"smallest_step_s", r.smallest_dt},
      {"largest_step_s", r.largest_dt},
      {"ion_number_drift", r.ion_number_drift},
      {"ion_relaxation_time_s", ions.relaxation_s},
      {"ion_gap_crossing_time_s", ions.gap_s},
      {"snapshots", snapshots},
      {"snapshot_collection", listed.empty() ? json(nullptr) : json("ions.pvd")},
      {"model", "ions move by drift and diffusion (BDF2 time steps); electrons and holes in their steady state at "
                "every instant; no displacement current in the terminal current"}};
    if (r.converged)
      {
        std::string line = "hysteresis scan: ";
        for (const auto &curve : r.curves)
          line += curve.direction + " " +
                  (curve.metrics.valid ? "Pmax " + format_number(curve.metrics.Pmax, 4) + " mW/cm^2" : "no metrics") +
                  ", ";
        line += "hysteresis index " +
                (std::isfinite(r.hysteresis_index) ? format_number(r.hysteresis_index, 3) : std::string("n/a")) +
                ", " + std::to_string(r.time_steps) + " time steps";
        progress(line);
      }
    else
      progress("hysteresis scan failed: " + r.diagnostic);
    return out;
  }
} // namespace backcomb::simulator
