#include "simulator/case_run.h"

#include "simulator/checkpoint.h"
#include "postprocess/dead_zone.h"
#include "simulator/guard_rails.h"
#include "postprocess/losses.h"

#include "fem/drift_diffusion.h"
#include "fem/jv_scan.h"
#include "geometry/ids.h"
#include "base/entries.h"
#include "geometry/period_mesh.h"

#include <deal.II/base/config.h>
#include <deal.II/base/mpi.h>
#include <deal.II/distributed/shared_tria.h>
#include <deal.II/grid/tria.h>

#include <gmsh.h>
#include <nlohmann/json.hpp>
#include <vtkVersion.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iomanip>
#include <iostream>
#include <map>
#include <optional>
#include <sstream>
#include <stdexcept>
#include <unistd.h>

namespace backcomb::simulator
{
  namespace ids = backcomb::geometry::ids;
  using json    = nlohmann::json;
  using namespace backcomb::postprocess;

  namespace
  {
    double
    seconds_since(const std::chrono::steady_clock::time_point t0)
    {
      return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    }

    json
    statistics_json(const geometry::MeshStatistics &s)
    {
      return {{"cells", s.n_cells},
              {"smallest_cell_um", s.min_size_um},
              {"largest_cell_um", s.max_size_um},
              {"smallest_cell_x_um", s.min_x_size_um},
              {"smallest_cell_y_um", s.min_y_size_um},
              {"worst_aspect_ratio", s.worst_aspect_ratio}};
    }

    void
    print_statistics(const geometry::MeshStatistics &s)
    {
      std::printf("mesh: %u cells; cell sides %.4g .. %.4g um (x from %.4g um, y from %.4g um); "
                  "worst aspect ratio %.0f\n",
                  s.n_cells, s.min_size_um, s.max_size_um, s.min_x_size_um, s.min_y_size_um,
                  s.worst_aspect_ratio);
    }

    // Rank 0 writes the mesh file, then every process reads it. An error
    // on rank 0 is passed on to all processes so that none waits forever.
    void
    build_shared_mesh(const Case &c, const std::string &msh, dealii::Triangulation<2> &tria, MPI_Comm comm)
    {
      std::string error;
      bool        input_error = false;
      if (dealii::Utilities::MPI::this_mpi_process(comm) == 0)
        try
          {
            geometry::write_period_msh(c.geometry, c.mesh, msh);
          }
        catch (const InputError &e)
          {
            error       = e.what();
            input_error = true;
          }
        catch (const std::exception &e)
          {
            error = e.what();
          }
      error       = dealii::Utilities::MPI::broadcast(comm, error, 0);
      input_error = dealii::Utilities::MPI::broadcast(comm, input_error, 0);
      if (!error.empty())
        {
          if (input_error)
            throw InputError(error);
          throw OutputError(error);
        }
      try
        {
          geometry::read_triangulation(msh, tria);
        }
      catch (const InputError &)
        {
          throw;
        }
      catch (const std::exception &e)
        {
          throw OutputError(e.what());
        }
    }

    // Progress on a terminal; nothing in batch logs or with --quiet.
    struct Progress
    {
      bool on;
      explicit Progress(bool quiet)
        : on(!quiet && isatty(fileno(stderr)))
      {}
      void
      line(const std::string &s) const
      {
        if (on)
          std::fprintf(stderr, "\r%-78s", s.c_str());
      }
      void
      done() const
      {
        if (on)
          std::fprintf(stderr, "\r%-78s\r", "");
      }
    };

    std::string
    bias_name(double v)
    {
      std::ostringstream s;
      s << std::fixed << std::setprecision(4) << v;
      return s.str();
    }

    std::vector<double>
    bias_grid(const Case &c)
    {
      std::vector<double> v;
      const long n = std::lround(std::floor((c.jv.stop - c.jv.start) / c.jv.step + 1e-9));
      for (long i = 0; i <= n; ++i)
        v.push_back(c.jv.start + i * c.jv.step);
      if (v.back() < c.jv.stop - 1e-9)
        v.push_back(c.jv.stop);
      if (c.jv.start < 0 && c.jv.stop > 0)
        v.push_back(0.0);
      for (const double f : c.output.field_biases)
        v.push_back(f);
      std::sort(v.begin(), v.end());
      v.erase(std::unique(v.begin(), v.end(), [](double a, double b) { return std::abs(a - b) < 1e-9; }),
              v.end());
      return v;
    }

    std::map<unsigned, fem::Material>
    materials_of(const Case &c)
    {
      std::map<unsigned, fem::Material> m{{ids::absorber, c.absorber}};
      if (c.geometry.layout == geometry::GeometryParameters::Layout::test_strip)
        m[ids::absorber_right] = c.absorber;
      if (c.geometry.electron_interlayer_nm > 0)
        m[ids::electron_interlayer] = c.electron_interlayer;
      if (c.geometry.hole_interlayer_nm > 0)
        m[ids::hole_interlayer] = c.hole_interlayer;
      return m;
    }

    // J at 0 V interpolated on a converged curve, if the curve reaches it.
    std::optional<double>
    short_circuit_current(const std::vector<fem::JVPoint> &c)
    {
      for (std::size_t i = 0; i + 1 < c.size(); ++i)
        if (c[i].voltage <= 0 && c[i + 1].voltage >= 0)
          return c[i].current + (0 - c[i].voltage) / (c[i + 1].voltage - c[i].voltage) *
                                  (c[i + 1].current - c[i].current);
      if (c.size() == 1 && std::abs(c[0].voltage) < 1e-9)
        return c[0].current;
      return std::nullopt;
    }

    // The metrics; when the curve does not bracket them (a failed point cut
    // it off), null in place of every number that needs the missing part:
    // only Jsc can then remain.
    json
    metrics_json(const fem::JVMetrics &m, const std::optional<double> &jsc, double active_scale,
                 double input_power)
    {
      if (!m.valid)
        return {{"Jsc_mA_per_cm2", jsc ? json(*jsc) : json(nullptr)},
                {"Voc_V", nullptr},
                {"FF", nullptr},
                {"Pmax_mW_per_cm2", nullptr},
                {"Vmp_V", nullptr},
                {"Jmp_mA_per_cm2", nullptr},
                {"PCE_percent", nullptr},
                {"per_active_area",
                 {{"Jsc_mA_per_cm2", jsc ? json(*jsc * active_scale) : json(nullptr)},
                  {"Pmax_mW_per_cm2", nullptr},
                  {"PCE_percent", nullptr}}}};
      json j = {{"Jsc_mA_per_cm2", m.Jsc},   {"Voc_V", m.Voc},  {"FF", m.FF},
                {"Pmax_mW_per_cm2", m.Pmax}, {"Vmp_V", m.Vmp},  {"Jmp_mA_per_cm2", m.Jmp}};
      j["PCE_percent"] = input_power > 0 ? json(100 * m.Pmax / input_power) : json(nullptr);
      j["per_active_area"] = {{"Jsc_mA_per_cm2", m.Jsc * active_scale},
                              {"Pmax_mW_per_cm2", m.Pmax * active_scale},
                              {"PCE_percent", input_power > 0 ? json(100 * m.Pmax * active_scale / input_power)
                                                              : json(nullptr)}};
      return j;
    }

    // Every bias of a sweep with its status: "converged" with its current,
    // "failed", or "not computed" (beyond a failure, or when the sweep
    // could not start), the last two with a null current.
    void
    add_points(json &list, const std::string &label, const fem::JVScan &s, const std::vector<double> &grid)
    {
      std::map<long, json> rows;
      auto                 key = [](double v) { return std::lround(v * 1e7); };
      for (const double v : grid)
        rows[key(v)] = {{"sweep", label}, {"voltage_V", v}, {"current_mA_per_cm2", nullptr},
                        {"status", "not computed"}};
      for (const auto &p : s.points)
        rows[key(p.jv.voltage)] = {{"sweep", label},
                                   {"voltage_V", p.jv.voltage},
                                   {"current_mA_per_cm2", p.jv.converged ? json(p.jv.current) : json(nullptr)},
                                   {"status", p.jv.converged ? "converged" : "failed"}};
      for (auto &[k, r] : rows)
        list.push_back(std::move(r));
    }

    std::string
    number(double v)
    {
      std::ostringstream s;
      s << std::setprecision(10) << v;
      return s.str();
    }
  } // namespace

  int
  run_mesh(const Case &c, const RunOptions &o)
  {
    make_folder(o.folder);
    dealii::Triangulation<2> tria;
    const std::string        msh = o.folder + "/mesh.msh";
    try
      {
        geometry::build_triangulation(c.geometry, c.mesh, tria, msh);
        geometry::write_mesh_preview(tria, o.folder + "/mesh.vtu");
      }
    catch (const InputError &)
      {
        throw;
      }
    catch (const std::exception &e)
      {
        throw OutputError(e.what());
      }
    print_statistics(geometry::mesh_statistics(tria));
    std::printf("wrote %s/mesh.msh and %s/mesh.vtu\n", o.folder.c_str(), o.folder.c_str());
    return exit_ok;
  }

  int
  run_solve(const Case &c, const RunOptions &o)
  {
    const auto     t_start = std::chrono::steady_clock::now();
    const Progress progress(o.quiet || dealii::Utilities::MPI::this_mpi_process(o.communicator) != 0);
    const fem::ProgressLine progress_line = [&progress](const std::string &s) { progress.line(s); };
    json           summary;
    summary["backcomb_version"] = BACKCOMB_VERSION;
    summary["software"] = {{"deal.II", DEAL_II_PACKAGE_VERSION},
                           {"gmsh", GMSH_API_VERSION},
                           {"vtk", vtkVersion::GetVTKVersion()}};
    summary["case_file"]  = c.file;
    summary["overrides"]  = c.overrides;
    summary["case_text"]  = c.echo;

    // Everything that can fail on input is checked before the folder exists.
    const double film_um = c.geometry.absorber_thickness_um;
    fem::FingerLayout layout;
    const bool strip = c.geometry.layout == geometry::GeometryParameters::Layout::test_strip;
    layout.has_fingers                   = !strip;
    layout.electron_finger_half_width_um = 0.5 * c.geometry.electron_finger_width_um;
    layout.gap_um                        = c.geometry.gap_um;
    layout.hole_finger_half_width_um     = 0.5 * c.geometry.hole_finger_width_um;
    const fem::Generation generation(c.illumination, c.absorber.band_gap, film_um, layout);

    const bool root = dealii::Utilities::MPI::this_mpi_process(o.communicator) == 0;
    make_folder(o.folder);
    // summary.json marks a finished run and describes the files beside it:
    // remove the previous one before any of them is replaced, so that a
    // killed run never leaves a summary next to files of another run.
    if (root)
      {
        std::error_code ec;
        std::filesystem::remove(o.folder + "/summary.json", ec);
      }
    const auto t_mesh = std::chrono::steady_clock::now();
    dealii::parallel::shared::Triangulation<2> tria(o.communicator);
    build_shared_mesh(c, o.folder + "/mesh.msh", tria, o.communicator);
    const auto stats   = geometry::mesh_statistics(tria);
    summary["mesh"]    = statistics_json(stats);
    const double t_m   = seconds_since(t_mesh);
    if (!o.quiet && root)
      print_statistics(stats);

    const fem::DeviceModel device(
      c.device.temperature, materials_of(c), {ids::absorber, ids::absorber_right},
      c.electron_contact, c.hole_contact, c.top_surface, c.gap_interface,
      [&generation](double x, double y) { return generation.rate(x, y); });
    fem::DriftDiffusionSolver solver(tria, device, c.numerics);
    summary["unknowns"] = solver.n_dofs();

    // Meshes that cannot resolve the physics are reported before the solve.
    summary["warnings"] = guard_rail_warnings(c, tria);
    if (root)
      for (const auto &w : summary["warnings"])
        std::fprintf(stderr, "backcomb: warning: %s\n", w.get<std::string>().c_str());

    // Converged points go to a checkpoint; those of an interrupted run of
    // the same case are taken from it.
    Checkpoint checkpoint(o.folder,
                          checkpoint_fingerprint(c.echo, c.overrides, o.folder + "/mesh.msh", solver.n_dofs(),
                                                 dealii::Utilities::MPI::n_mpi_processes(o.communicator)),
                          o.communicator);
    fem::Resume resume;
    resume.stored = checkpoint.load(o.quiet);
    resume.store  = &checkpoint;
    summary["resumed_points"] = resume.stored.size();

    const double width  = solver.width_um();
    const double active = (!strip && c.device.active_area == DeviceSettings::ActiveArea::gap)
                            ? c.geometry.gap_um
                            : width;
    const double input_power = 100.0 * c.illumination.intensity_suns; // mW/cm^2
    const bool   lit         = c.illumination.intensity_suns > 0;

    // Light: equilibrium, light ramp, J-V.
    fem::JVScan light;
    const auto t_light = std::chrono::steady_clock::now();
    const fem::StepReport on =
      fem::start_state(solver, lit ? 1.0 : 0.0, c.numerics.max_halvings, lit ? "light" : "dark", resume);
    light.newton += on.newton_iterations;
    light.halvings += on.halvings;
    double generated = 0;
    std::string status = "converged";
    if (!on.converged)
      {
        light.failures.push_back(on.diagnostic);
        status = "failed";
      }
    else
      {
        generated = solver.generation_current();
        fem::scan(solver, bias_grid(c), c.jv.reverse, lit ? 1.0 : 0.0, c.jv.step, c.numerics.max_halvings, light,
                  progress_line, lit ? "light" : "dark", resume);
        if (lit)
          fem::refine(solver, light, c.jv.refine_to, c.numerics.max_halvings, resume);
      }
    const double t_l = seconds_since(t_light);
    const double light_assembly = solver.assembly_seconds(), light_solve = solver.linear_solve_seconds();

    // Fields at the requested biases, from the stored states, with the
    // adjoint collection probability under light; the dead zone at short
    // circuit.
    json   fields = json::array(), dead_zone_json = nullptr, collection_json = nullptr;
    double adjoint_seconds = 0;
    unsigned adjoint_solves = 0;
    if (on.converged)
      {
        make_folder(o.folder + "/fields");
        std::vector<double> biases = c.output.fields ? c.output.field_biases : std::vector<double>{};
        const bool need_sc = lit && std::find_if(biases.begin(), biases.end(), [](double v) {
                                      return std::abs(v) < 1e-9;
                                    }) == biases.end();
        if (need_sc)
          biases.push_back(0.0);
        std::ostringstream pvd;
        pvd << "<?xml version=\"1.0\"?>\n<VTKFile type=\"Collection\" version=\"0.1\">\n<Collection>\n";
        for (const double v : biases)
          for (const auto &p : light.points)
            if (p.jv.converged && std::abs(p.jv.voltage - v) < 1e-9)
              {
                solver.set_state(p.state, v, lit ? 1.0 : 0.0);
                const bool        listed = !(need_sc && std::abs(v) < 1e-9);
                const std::string name   = "fields/" + std::string(lit ? "light" : "dark") + "_V" +
                                         bias_name(v) + (listed ? "" : "_collection") + ".vtu";
                const std::string path   = o.folder + "/" + name;
                dealii::Vector<double> fc;
                if (lit)
                  {
                    const auto t0 = std::chrono::steady_clock::now();
                    fc            = solver.collection_probability();
                    adjoint_seconds += seconds_since(t0);
                    ++adjoint_solves;
                  }
                try
                  {
                    solver.write_fields(path, lit ? &fc : nullptr, c.output.dead_zone_threshold);
                  }
                catch (const std::exception &e)
                  {
                    throw OutputError(e.what());
                  }
                if (lit && std::abs(v) < 1e-9)
                  {
                    const double collected = solver.collected_current(fc);
                    collection_json = {{"bias_V", 0.0},
                                       {"collected_current_mA_per_cm2", collected},
                                       {"terminal_current_mA_per_cm2", p.jv.current},
                                       {"relative_difference", p.jv.current != 0 ? (collected - p.jv.current) / p.jv.current : 0.0}};
                    if (root)
                      {
                        try
                          {
                            const std::string contour = "fields/dead_zone_contour_V" + bias_name(v) + ".vtp";
                            const DeadZone d = analyse_dead_zone(path, c.output.dead_zone_threshold,
                                                                 o.folder + "/" + contour);
                            dead_zone_json = {{"threshold", d.threshold},
                                              {"area_fraction", d.area_fraction},
                                              {"generated_fraction", d.generated_fraction},
                                              {"absorber_area_um2", d.absorber_area_um2},
                                              {"dead_area_um2", d.dead_area_um2},
                                              {"present", d.present},
                                              {"x_min_um", d.present ? json(d.x_min_um) : json(nullptr)},
                                              {"x_max_um", d.present ? json(d.x_max_um) : json(nullptr)},
                                              {"width_um", d.width_um()},
                                              {"centre_um", d.present ? json(d.centre_um()) : json(nullptr)},
                                              {"contour_file", contour}};
                          }
                        catch (const std::exception &e)
                          {
                            throw OutputError(e.what());
                          }
                      }
                  }
                if (listed)
                  {
                    pvd << "<DataSet timestep=\"" << number(v) << "\" file=\"" << name << "\"/>\n";
                    fields.push_back({{"bias_V", v}, {"file", name}});
                  }
                else if (!c.output.fields && root)
                  std::filesystem::remove(path);
              }
        pvd << "</Collection>\n</VTKFile>\n";
        if (root && c.output.fields)
          write_file_atomically(o.folder + "/fields.pvd", pvd.str());
        if (!c.output.fields && root)
          {
            std::error_code ec;
            std::filesystem::remove(o.folder + "/fields", ec); // only if empty
          }
      }

    // Where the power goes: the balance at short circuit, the maximum power
    // point, open circuit and the requested biases, from the stored states
    // (or a solve from the nearest one).
    std::vector<LossPoint> loss_points;
    std::vector<std::pair<double, double>> suns_voc; // (light factor, V_oc)
    const auto t_losses = std::chrono::steady_clock::now();
    if (lit && on.converged)
      {
        const fem::JVMetrics m0 = fem::jv_metrics(fem::converged_curve(light));
        // Puts the solver at bias v under full light: the stored state, or
        // a solve from the nearest one.
        auto balance_at = [&](const std::string &name, const double v) {
          if (!fem::go_to(solver, light, v, c.numerics.max_halvings, resume))
            {
              light.failures.push_back("power balance at " + name + " (" + bias_name(v) +
                                       " V): no converged state");
              return;
            }
          loss_points.push_back({name, solver.power_balance()});
        };
        if (m0.valid)
          {
            const auto curve = fem::converged_curve(light);
            const auto best  = std::max_element(curve.begin(), curve.end(), [](const auto &a, const auto &b) {
              return a.voltage * a.current < b.voltage * b.current;
            });
            balance_at("short_circuit", 0.0);
            balance_at("max_power", best->voltage);
            balance_at("open_circuit", m0.Voc);
          }
        for (const double v : c.output.loss_biases)
          balance_at("bias_" + bias_name(v), v);

        // Suns-V_oc: open circuit at decreasing light, each from the last.
        std::vector<double> levels = c.jv.suns_voc;
        std::sort(levels.rbegin(), levels.rend());
        if (m0.valid && !levels.empty() && fem::go_to(solver, light, m0.Voc, c.numerics.max_halvings, resume))
          {
            double previous = 1.0;
            for (const double s : levels)
              {
                // Ideal-diode guess for the next V_oc: kT/q ln of the light ratio.
                const double guess = solver.voltage() + device.scaling.Vt * std::log(s / previous) +
                                     (s == previous ? 1e-3 : 0.0);
                const fem::OpenCircuit oc =
                  fem::find_open_circuit(solver, s, guess, c.numerics.max_halvings);
                light.newton += oc.newton_iterations;
                if (!oc.converged)
                  {
                    light.failures.push_back("suns-Voc at light factor " + number(s) + ": " + oc.diagnostic);
                    break;
                  }
                suns_voc.emplace_back(s, oc.voltage);
                previous = s;
              }
          }
      }
    const double t_loss = seconds_since(t_losses);

    // Dark J-V over the same biases.
    fem::JVScan dark;
    const auto t_dark = std::chrono::steady_clock::now();
    if (lit && c.jv.dark)
      {
        const fem::StepReport eq = fem::start_state(solver, 0.0, c.numerics.max_halvings, "dark", resume);
        dark.newton += eq.newton_iterations;
        if (eq.converged)
          fem::scan(solver, bias_grid(c), c.jv.reverse, 0.0, c.jv.step, c.numerics.max_halvings, dark,
                    progress_line, "dark", resume);
        else
          dark.failures.push_back(eq.diagnostic);
      }
    const double t_d = seconds_since(t_dark);
    progress.done();

    // Metrics from the light curve.
    const fem::JVMetrics m = lit ? fem::jv_metrics(fem::converged_curve(light)) : fem::JVMetrics();
    if (lit && !m.valid)
      status = "failed";

    // The whole comb cell (fingers and contact resistance, Electrodes
    // section) and the series resistance from suns-Voc, both from the
    // period's light J-V.
    json             cell_json = nullptr, rs_json = nullptr;
    fem::JVMetrics   cell_metrics;
    std::optional<fem::CombOperatingPoint> cell_mpp;
    if (m.valid && !strip)
      {
        std::vector<fem::JVPoint> curve;
        for (const auto &p : fem::converged_curve(light))
          if (curve.empty() || p.voltage > curve.back().voltage + 1e-9)
            curve.push_back(p);
        const fem::CombWidths widths{c.geometry.electron_finger_width_um, c.geometry.hole_finger_width_um,
                                     2 * width};
        try
          {
            if (!c.electrodes.ideal())
              {
                // Terminal voltages: the period's biases from 0 to the first
                // one past open circuit.
                std::vector<double> v;
                for (const auto &p : curve)
                  if (p.voltage >= -1e-12)
                    {
                      v.push_back(p.voltage);
                      if (p.current < 0)
                        break;
                    }
                const fem::CombCell cell(curve, widths, c.electrodes);
                cell_metrics = fem::jv_metrics(cell.jv(v));
                if (cell_metrics.valid)
                  cell_mpp = cell.solve(cell_metrics.Vmp);
                cell_json = {{"finger_length_mm", c.electrodes.finger_length_mm},
                             {"metrics", metrics_json(cell_metrics, cell_metrics.valid ? std::optional<double>(cell_metrics.Jsc) : std::nullopt, width / active, input_power)}};
                if (cell_mpp)
                  cell_json["at_max_power"] = {
                    {"bias_V", cell_mpp->terminal_voltage},
                    {"current_mA_per_cm2", cell_mpp->current},
                    {"output", cell_mpp->output_power},
                    {"hole_fingers", cell_mpp->hole_finger_loss},
                    {"electron_fingers", cell_mpp->electron_finger_loss},
                    {"hole_comb_contact_resistance", cell_mpp->hole_contact_loss},
                    {"electron_comb_contact_resistance", cell_mpp->electron_contact_loss},
                    {"largest_finger_drop_V", std::max(cell_mpp->hole_finger_drop, cell_mpp->electron_finger_drop)}};
              }
            if (suns_voc.size() >= 2)
              {
                std::vector<fem::SunsVocPoint> pts;
                for (const auto &[s, v] : suns_voc)
                  pts.push_back({s, v});
                const fem::PseudoJV               pseudo(pts, m.Jsc);
                const fem::SeriesResistance      film = fem::series_resistance(pseudo, curve, input_power);
                const fem::SeriesResistanceSplit split =
                  fem::split_series_resistance(pseudo, curve, widths, c.electrodes);
                rs_json = {{"total_ohm_cm2", split.total},
                           {"film_ohm_cm2", split.film},
                           {"contacts_ohm_cm2", split.contacts},
                           {"fingers_ohm_cm2", split.fingers},
                           {"pseudo_voltage_at_Jmp_V", film.pseudo_voltage_at_jmp},
                           {"pseudo_metrics", metrics_json(film.pseudo, film.pseudo.Jsc, width / active, input_power)}};
              }
          }
        catch (const std::exception &e)
          {
            light.failures.push_back(std::string("comb cell and series resistance: ") + e.what() +
                                     (dynamic_cast<const std::domain_error *>(&e)
                                        ? " (extend J-V sweep/Suns-Voc intensities to lower light, or the J-V "
                                          "sweep to higher voltage)"
                                        : ""));
            if (status == "converged")
              status = "partial";
          }
      }
    for (const auto &p : light.points)
      if (!p.jv.converged)
        status = (status == "converged" && m.valid) ? "partial" : status;
    for (const auto &p : dark.points)
      if (!p.jv.converged && status == "converged")
        status = "partial";

    summary["status"]       = status;
    summary["failures"]     = light.failures;
    for (const auto &f : dark.failures)
      summary["failures"].push_back(f);
    const std::optional<double> jsc = lit ? short_circuit_current(fem::converged_curve(light)) : std::nullopt;
    summary["metrics"] = lit ? metrics_json(m, jsc, width / active, input_power) : json(nullptr);
    summary["points"]  = json::array();
    add_points(summary["points"], lit ? "light" : "dark", light, bias_grid(c));
    if (lit && c.jv.dark)
      add_points(summary["points"], "dark", dark, bias_grid(c));
    summary["footprint_width_um"] = width;
    summary["active_width_um"]    = active;
    summary["generation_current_mA_per_cm2"] = generated;
    summary["collection_efficiency"] = (jsc && generated > 0) ? json(*jsc / generated) : json(nullptr);
    summary["newton"] = {{"light_iterations", light.newton}, {"light_halvings", light.halvings},
                         {"dark_iterations", dark.newton}, {"dark_halvings", dark.halvings}};
    summary["timings_s"] = {{"mesh", t_m}, {"light", t_l}, {"dark", t_d},
                            {"total", seconds_since(t_start)}};
    summary["fields"]    = fields;
    summary["collection_map"] = collection_json;
    summary["dead_zone"]      = dead_zone_json;
    summary["timings_s"]["light_assembly"]     = light_assembly;
    summary["timings_s"]["light_linear_solve"] = light_solve;
    summary["light_points"] = light.points.size();
    summary["timings_s"]["adjoint_per_solve"] =
      adjoint_solves > 0 ? json(adjoint_seconds / adjoint_solves) : json(nullptr);
    summary["timings_s"]["newton_step_light"] =
      light.newton > 0 ? json(t_l / light.newton) : json(nullptr);

    // jv.csv: light and dark currents on the union of biases.
    std::map<long, std::pair<std::string, std::string>> rows;
    auto key = [](double v) { return std::lround(v * 1e7); };
    for (const auto &p : light.points)
      rows[key(p.jv.voltage)].first = p.jv.converged ? number(p.jv.current) : "failed";
    for (const auto &p : dark.points)
      rows[key(p.jv.voltage)].second = p.jv.converged ? number(p.jv.current) : "failed";
    std::ostringstream csv;
    csv << "# backcomb J-V; current density per footprint (period width " << width
        << " um), generator convention (positive = delivered)\n";
    csv << "voltage_V,J_light_mA_per_cm2,J_dark_mA_per_cm2\n";
    for (const auto &[k, r] : rows)
      csv << number(k * 1e-7) << ',' << r.first << ',' << r.second << '\n';
    const std::optional<fem::OpticalBudget> optics = generation.optical_budget();
    summary["losses"] = loss_points.empty() ? json(nullptr) : losses_json(loss_points, optics);
    summary["suns_voc"] = json::array();
    for (const auto &[s, v] : suns_voc)
      summary["suns_voc"].push_back({{"light_factor", s}, {"Voc_V", v}});
    summary["timings_s"]["losses_and_suns_voc"] = t_loss;
    summary["cell"]              = cell_json;
    summary["series_resistance"] = rs_json;
    if (cell_mpp && summary["losses"].is_object())
      summary["losses"]["electrodes_at_cell_max_power"] = {
        {"fingers", cell_mpp->hole_finger_loss + cell_mpp->electron_finger_loss},
        {"contact_resistance", cell_mpp->hole_contact_loss + cell_mpp->electron_contact_loss}};
    summary["processes"] = dealii::Utilities::MPI::n_mpi_processes(o.communicator);
    const int code = status == "failed" ? exit_no_convergence : exit_ok;
    if (!root)
      return code;
    std::vector<std::string> plot_warnings;
    if (!loss_points.empty())
      {
        std::optional<ElectrodeLoss> electrode_loss;
        if (cell_mpp)
          electrode_loss = ElectrodeLoss{cell_mpp->terminal_voltage,    cell_mpp->current,
                                         cell_mpp->output_power,        cell_mpp->hole_finger_loss,
                                         cell_mpp->electron_finger_loss, cell_mpp->hole_contact_loss,
                                         cell_mpp->electron_contact_loss};
        write_file_atomically(o.folder + "/losses.csv", losses_csv(loss_points, optics, width, electrode_loss));
        const auto mpp = std::find_if(loss_points.begin(), loss_points.end(),
                                      [](const LossPoint &p) { return p.name == "max_power"; });
        if (mpp != loss_points.end())
          write_loss_chart(*mpp, optics, electrode_loss,
                           "Where the power goes at the maximum power point (" + bias_name(mpp->balance.bias_V) +
                             " V)",
                           o.folder + "/losses", plot_warnings);
      }
    for (const auto &w : plot_warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    write_file_atomically(o.folder + "/jv.csv", csv.str());
    write_file_atomically(o.folder + "/summary.json", summary.dump(2) + "\n");
    checkpoint.remove();

    if (m.valid)
      std::printf("Jsc %.3f mA/cm2  Voc %.4f V  FF %.4f  PCE %.3f %% (footprint), %.3f %% (active)  "
                  "collection %.4f\n",
                  m.Jsc, m.Voc, m.FF, input_power > 0 ? 100 * m.Pmax / input_power : 0.0,
                  input_power > 0 ? 100 * m.Pmax * width / active / input_power : 0.0,
                  generated > 0 ? m.Jsc / generated : 0.0);
    else if (lit)
      std::printf("J-V metrics not available: the light J-V did not converge where they are needed\n");
    if (cell_metrics.valid)
      std::printf("comb cell with %.3g mm fingers: FF %.4f  PCE %.3f %% (footprint); electrodes take %.3f mW/cm2 "
                  "at its maximum power point\n",
                  c.electrodes.finger_length_mm, cell_metrics.FF,
                  input_power > 0 ? 100 * cell_metrics.Pmax / input_power : 0.0,
                  cell_mpp ? cell_mpp->hole_finger_loss + cell_mpp->electron_finger_loss + cell_mpp->hole_contact_loss +
                               cell_mpp->electron_contact_loss
                           : 0.0);
    if (rs_json.is_object())
      std::printf("series resistance (suns-Voc) %.4g ohm cm2: film %.4g, contacts %.4g, fingers %.4g\n",
                  rs_json["total_ohm_cm2"].get<double>(), rs_json["film_ohm_cm2"].get<double>(),
                  rs_json["contacts_ohm_cm2"].get<double>(), rs_json["fingers_ohm_cm2"].get<double>());
    for (const auto &p : loss_points)
      if (p.name == "max_power")
        {
          const LossSplit ls = loss_split(p.balance);
          std::printf("at the maximum power point (mW/cm2): recombination %.3f, film Joule %.3f, contacts %.3f, "
                      "output %.3f; balance residual %.1e of the input\n",
                      ls.recombination, ls.film_joule, ls.contacts, p.balance.output,
                      p.balance.input != 0 ? p.balance.residual() / p.balance.input : 0.0);
        }
    for (const auto &f : summary["failures"])
      std::fprintf(stderr, "backcomb: %s\n", f.get<std::string>().c_str());
    std::printf("status %s; wrote %s/jv.csv, %s/summary.json%s\n", status.c_str(), o.folder.c_str(),
                o.folder.c_str(), fields.empty() ? "" : " and fields.pvd");
    return code;
  }
} // namespace backcomb::simulator
