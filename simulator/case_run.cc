#include "simulator/case_run.h"
#include "simulator/case_setup.h"
#include "simulator/device_response.h"

#include "base/files.h"
#include "base/json_file.h"
#include "base/format.h"
#include "base/text.h"
#include "base/status.h"
#include "fem/comb_electrodes.h"
#include "fem/drift_diffusion.h"
#include "fem/jv_scan.h"
#include "fem/optics.h"
#include "geometry/ids.h"
#include "geometry/period_mesh.h"
#include "postprocess/dead_zone.h"
#include "postprocess/eqe.h"
#include "postprocess/jv_tables.h"
#include "postprocess/losses.h"
#include "postprocess/pvd.h"
#include "postprocess/views.h"
#include "simulator/bounds.h"
#include "simulator/checkpoint.h"
#include "simulator/guard_rails.h"
#include "simulator/hysteresis_run.h"
#include "simulator/recycling_setup.h"

#include <deal.II/base/config.h>
#include <deal.II/base/mpi.h>
#include <deal.II/base/timer.h>
#include <deal.II/distributed/shared_tria.h>
#include <deal.II/grid/tria.h>

#include <gmsh.h>
#include <nlohmann/json.hpp>
#include <vtkVersion.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <exception>
#include <filesystem>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <sched.h>
#include <sstream>
#include <stdexcept>
#include <thread>
#include <unistd.h>

namespace backcomb::simulator
{
  namespace ids = backcomb::geometry::ids;
  using json    = nlohmann::json;
  using namespace backcomb::postprocess;

  namespace
  {
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

    std::string
    statistics_text(const geometry::MeshStatistics &s)
    {
      char text[300];
      std::snprintf(text, sizeof text,
                    "mesh: %u cells; cell sides %.4g .. %.4g um (x from %.4g um, y from %.4g um); "
                    "worst aspect ratio %.0f",
                    s.n_cells, s.min_size_um, s.max_size_um, s.min_x_size_um, s.min_y_size_um,
                    s.worst_aspect_ratio);
      return text;
    }

    // What a run tells while it works: one line per finished stage on
    // stdout (not with --quiet), each J-V point as a line overwritten in
    // place when stderr is a terminal, and with --log every one of them,
    // stamped with the elapsed time, in the log file (written as it goes,
    // for job scripts; --quiet does not silence the log).
    class Progress
    {
    public:
      Progress(const bool quiet, const bool root, const std::string &log_file)
        : print(!quiet && root)
        , live(print && isatty(fileno(stderr)))
        , start(std::chrono::steady_clock::now())
      {
        if (root && !log_file.empty())
          {
            log.reset(std::fopen(log_file.c_str(), "w"));
            if (!log)
              throw OutputError("--log " + log_file + ": cannot open the file for writing");
          }
      }

      // A finished stage. Stages and lines may come from two threads (the
      // dark J-V runs beside the light one): each is printed whole.
      void
      stage(const std::string &s) const
      {
        const std::lock_guard<std::mutex> hold(mutex);
        clear_line();
        if (print)
          {
            std::printf("[%7.1f s] %s\n", seconds(), s.c_str());
            std::fflush(stdout);
          }
        write_log(s);
      }

      // One J-V point.
      void
      line(const std::string &s) const
      {
        const std::lock_guard<std::mutex> hold(mutex);
        if (live)
          std::fprintf(stderr, "\r%-78s", s.c_str());
        write_log(s);
      }

      void
      done() const
      {
        const std::lock_guard<std::mutex> hold(mutex);
        clear_line();
      }

      // A line for the log file only.
      void
      to_log(const std::string &s) const
      {
        const std::lock_guard<std::mutex> hold(mutex);
        write_log(s);
      }

    private:
      void
      clear_line() const
      {
        if (live)
          std::fprintf(stderr, "\r%-78s\r", "");
      }

      void
      write_log(const std::string &s) const
      {
        if (log)
          {
            std::fprintf(log.get(), "[%7.1f s] %s\n", seconds(), s.c_str());
            std::fflush(log.get());
          }
      }

      double
      seconds() const
      {
        return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      }

      struct Close
      {
        void operator()(std::FILE *f) const { std::fclose(f); }
      };
      bool                               print, live;
      std::chrono::steady_clock::time_point start;
      std::unique_ptr<std::FILE, Close>   log;
      mutable std::mutex                  mutex;
    };

    // Whether the dark J-V may run in a thread of its own beside the light
    // J-V: the case runs on one process, MPI allows calls from several
    // threads (the backcomb program asks for MPI_THREAD_MULTIPLE,
    // app/mpi_threads.cc), this process may run on two CPUs or more, and
    // the job's processes leave a core for the second thread (a sweep on
    // as many processes as cores puts one case on each and no thread).
    bool
    second_core_free(const MPI_Comm comm)
    {
      if (dealii::Utilities::MPI::n_mpi_processes(comm) != 1)
        return false;
      int level = MPI_THREAD_SINGLE;
      MPI_Query_thread(&level);
      if (level != MPI_THREAD_MULTIPLE)
        return false;
      cpu_set_t allowed;
      CPU_ZERO(&allowed);
      if (sched_getaffinity(0, sizeof allowed, &allowed) != 0 || CPU_COUNT(&allowed) < 2)
        return false;
      return 2 * dealii::Utilities::MPI::n_mpi_processes(MPI_COMM_WORLD) <= std::thread::hardware_concurrency();
    }

    // Thrown in the dark J-V's thread to stop it when the run ends early.
    struct DarkScanStopped
    {
    };

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

    json
    dead_zone_json(const DeadZone &d, const std::string &contour)
    {
      return {{"threshold", d.threshold},
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

    json
    cell_at_max_power_json(const fem::CombOperatingPoint &p)
    {
      return {{"bias_V", p.terminal_voltage},
              {"current_mA_per_cm2", p.current},
              {"output", p.output_power},
              {"hole_fingers", p.hole_finger_loss},
              {"electron_fingers", p.electron_finger_loss},
              {"hole_comb_contact_resistance", p.hole_contact_loss},
              {"electron_comb_contact_resistance", p.electron_contact_loss},
              {"largest_finger_drop_V", std::max(p.hole_finger_drop, p.electron_finger_drop)}};
    }

    // The period's light J-V for the comb cell: strictly increasing biases.
    std::vector<fem::JVPoint>
    increasing_curve(const fem::JVScan &light)
    {
      std::vector<fem::JVPoint> curve;
      for (const auto &p : fem::converged_curve(light))
        if (curve.empty() || p.voltage > curve.back().voltage + 1e-9)
          curve.push_back(p);
      return curve;
    }

    // Section names of the run's timer (also the keys of the phases in
    // summary.json "timings_s").
    const char *const t_mesh   = "mesh";
    const char *const t_light  = "light";
    const char *const t_fields = "fields";
    const char *const t_losses = "losses_and_suns_voc";
    const char *const t_dark   = "dark";
    const char *const t_cell   = "comb_cell";
    const char *const t_ions   = "hysteresis_scan";
  } // namespace

  // One `solve` of a case. The members are the data that flows from step to
  // step; each step reads what earlier steps left and adds its own part.
  class CaseRun
  {
  public:
    CaseRun(const Case &c, const RunOptions &o);
    ~CaseRun();
    CaseRun(const CaseRun &) = delete;
    CaseRun &operator=(const CaseRun &) = delete;
    int run();

  private:
    void prepare_folder();
    void check_illumination();
    void lock_folder();
    void check_densities();
    void build_mesh();
    void set_up_solver();
    void solve_light_jv();
    void write_fields();
    void write_view_fields();
    void write_collection_picture(const std::string &vtu);
    void analyse_collection(double v, const fem::ScanPoint &sc, const std::string &vtu,
                            const dealii::Vector<double> &fc);
    void compute_power_balance(const fem::JVMetrics &m0);
    void balance_at(const std::string &name, double v);
    void compute_suns_voc(const fem::JVMetrics &m0);
    void start_dark_jv(const dealii::Vector<double> *equilibrium);
    void scan_dark(fem::DriftDiffusionSolver &s);
    void solve_dark_jv();
    void scan_with_moving_ions();
    void evaluate_comb_cell();
    void settle_status();
    json summary_of_results() const;
    json photon_recycling_json() const;
    void write_results();
    void print_report() const;

    const Case       &c;
    const RunOptions &o;
    const bool        root;
    const bool        strip;
    const bool        lit;
    double            input_power; // mW/cm^2, integrated from the spectrum used
    const Progress    progress;
    dealii::TimerOutput timer;
    dealii::Timer       total_time; // started with the run

    std::unique_ptr<fem::Generation>                           generation;
    std::unique_ptr<dealii::parallel::shared::Triangulation<2>> tria;
    std::unique_ptr<fem::DeviceModel>                          device;
    std::unique_ptr<fem::DriftDiffusionSolver>                 solver;
    // The dark J-V beside the light one (second_core_free()): its own
    // solver, communicator and thread; `stop_dark` ends it early.
    std::unique_ptr<fem::DriftDiffusionSolver> dark_solver;
    MPI_Comm                                   dark_comm = MPI_COMM_NULL;
    std::thread                                dark_thread;
    std::exception_ptr                         dark_error;
    std::atomic<bool>                          stop_dark{false};
    double                                     dark_seconds = 0;
    std::unique_ptr<Checkpoint>                                checkpoint;
    std::unique_ptr<FolderLock>                                lock; // rank 0
    std::optional<double>     photon_limit; // above-gap photon current of the incident light, mA/cm^2
    std::vector<BoundFinding> findings;     // physical bounds (simulator/bounds.h)
    std::optional<double>     degeneracy;   // largest n/N_c or p/N_v at open circuit
    std::string               degeneracy_where;
    fem::Resume                                                resume;
    json                                                       summary;

    double width = 0, active = 0; // footprint and active width, um
    // Of the current collected at short circuit (collection map), the share
    // of the pairs generated over the active width.
    std::optional<double> active_share;
    // Per-active-area figures = footprint figures times this (see README,
    // "per active area"); unknown without a collection map.
    std::optional<double> active_scale() const
    {
      if (!(active > 0) || active >= width)
        return 1.0;
      if (!active_share)
        return std::nullopt;
      return *active_share * width / active;
    }
    fem::StepReport on;           // the light (or dark) start state
    fem::JVScan     light, dark;
    double          generated = 0; // mA/cm^2
    Status          status    = Status::converged;
    fem::JVMetrics  metrics;
    double          light_assembly = 0, light_solve = 0;
    unsigned        light_factorisations = 0, light_residuals = 0, dark_factorisations = 0;
    unsigned        ramp_factorisations = 0; // equilibrium and the light ramp
    double          ramp_seconds        = 0;

    json     fields = json::array(), dead_zone = nullptr, collection = nullptr;
    std::optional<QuantumEfficiency> eqe; // spectrum model, under light
    double   adjoint_seconds = 0;
    unsigned adjoint_solves  = 0;

    std::vector<LossPoint>                 loss_points;
    std::vector<std::pair<double, double>> suns_voc; // (light factor, V_oc)
    bool suns_voc_failed = false; // a requested level has no open circuit (status partial)

    json                                    cell_json = nullptr, rs_json = nullptr;
    fem::JVMetrics                          cell_metrics;
    std::optional<fem::CombOperatingPoint> cell_mpp;
    HysteresisOutput                        hysteresis;
  };

  CaseRun::CaseRun(const Case &c_, const RunOptions &o_)
    : c(c_)
    , o(o_)
    , root(dealii::Utilities::MPI::this_mpi_process(o.communicator) == 0)
    , strip(c.geometry.layout == geometry::GeometryParameters::Layout::test_strip)
    , lit(c.illumination.intensity_suns > 0)
    , input_power(100.0 * c.illumination.intensity_suns)
    , progress(o.quiet, root, o.log)
    , timer(o.communicator, std::cout, dealii::TimerOutput::never, dealii::TimerOutput::wall_times)
  {
    total_time.start();
  }

  CaseRun::~CaseRun()
  {
    stop_dark = true;
    if (dark_thread.joinable())
      dark_thread.join();
    dark_solver.reset();
    if (dark_comm != MPI_COMM_NULL)
      MPI_Comm_free(&dark_comm);
  }

  int
  CaseRun::run()
  {
    prepare_folder();
    build_mesh();
    set_up_solver();
    solve_light_jv();
    if (on.converged)
      write_fields();
    if (lit && on.converged)
      {
        // Both start from the metrics of the scanned curve, before the
        // balance adds its own points to it.
        const fem::JVMetrics scanned = fem::jv_metrics(fem::converged_curve(light));
        compute_power_balance(scanned);
        compute_suns_voc(scanned);
      }
    solve_dark_jv();
    scan_with_moving_ions();
    progress.done();
    metrics = lit ? fem::jv_metrics(fem::converged_curve(light)) : fem::JVMetrics();
    if (metrics.valid && !strip)
      evaluate_comb_cell();
    settle_status();
    const bool violated = std::any_of(findings.begin(), findings.end(), [](const auto &f) { return f.violated; });
    const int  code     = status == Status::failed ? exit_no_convergence : violated ? exit_bounds : exit_ok;
    if (!root)
      return code;
    write_results();
    print_report();
    progress.to_log("finished: status " + to_string(status) + ", exit code " + std::to_string(code));
    return code;
  }

  // Everything that can fail on input is checked before the folder exists
  // (the optical model reads its data files here).
  void
  CaseRun::prepare_folder()
  {
    summary["backcomb_version"] = BACKCOMB_VERSION;
    summary["software"]         = {
      {"deal.II", DEAL_II_PACKAGE_VERSION}, {"gmsh", GMSH_API_VERSION}, {"vtk", vtkVersion::GetVTKVersion()}};
    summary["case_file"] = c.file;
    summary["overrides"] = c.overrides;
    summary["case_text"] = c.echo;
    // Whose result this is: merge and a resumed sweep compare it with the
    // plan's case (base/text.h).
    summary["fingerprint"] = result_fingerprint(c.echo, c.overrides);
    generation = std::make_unique<fem::Generation>(c.illumination, c.absorber.band_gap,
                                                   c.geometry.absorber_thickness_um, finger_layout(c));
    check_illumination();
    make_folder(o.folder);
    lock_folder();
    // summary.json marks a finished run and describes the files beside it:
    // remove the previous one before any of them is replaced, so that a
    // killed run never leaves a summary next to files of another run.
    if (root)
      {
        std::error_code ec;
        std::filesystem::remove(o.folder + "/summary.json", ec);
      }
  }

  // The light as the solve will see it: the incident power integrated from
  // the spectrum actually used (PCE is divided by it), the spectrum's
  // integral against the stated intensity, the photon current bound of the
  // result checks, and a lit case in which nothing is absorbed, which is
  // refused here rather than failing later as a solve without metrics.
  void
  CaseRun::check_illumination()
  {
    if (!lit)
      return;
    const double suns   = c.illumination.intensity_suns;
    const auto   budget = generation->optical_budget();
    if (budget)
      {
        input_power = budget->incident;
        if (const auto f = spectrum_intensity_check(c.illumination.spectrum_file.string(),
                                                    budget->incident / (100 * suns)))
          {
            if (f->violated)
              throw InputError(f->message);
            findings.push_back(*f);
          }
      }
    photon_limit = generation->photon_current_above_gap_mA_per_cm2();
    std::optional<fem::Spectrum> spectrum;
    try
      {
        spectrum = fem::read_spectrum(c.illumination.spectrum_file);
      }
    catch (const InputError &)
      {
        // Only the spectrum model reads the file; the others may name any.
      }
    if (!photon_limit && spectrum)
      photon_limit = suns * fem::photon_current_mA_per_cm2(fem::above_gap_spectrum(*spectrum, c.absorber.band_gap));
    if (generation->absorbed_current_mA_per_cm2() > 0)
      return;
    std::string why = "the absorbed photon current is 0";
    if (c.illumination.model == "spectrum" && spectrum && photon_limit && *photon_limit <= 0)
      {
        const double shortest = spectrum->wavelength_nm.front();
        why = "no photon of the spectrum " + c.illumination.spectrum_file.string() + " (shortest wavelength " +
              format_number(shortest, 4) + " nm = " + format_number(fem::photon_energy_eV(shortest), 4) +
              " eV) is above the absorber's band gap " + format_number(c.absorber.band_gap, 4) +
              " eV (Absorber/Bands and permittivity/Band gap)";
      }
    else if (c.illumination.model == "spectrum")
      why += ": the absorber absorbs none of the above-gap light (Illumination/Optical constants file, "
             "Geometry/Absorber thickness)";
    else
      why += " (Illumination/Generation model = " + c.illumination.model + ": its rate or depth table gives no "
             "generation)";
    throw InputError("Illumination/Intensity = " + format_number(suns) + " suns, but nothing is absorbed: " + why +
                     "; for a dark run set Illumination/Intensity = 0");
  }

  // One run at a time in a results folder: a second solve into the same
  // --out stops here, before it changes anything (base/files.h).
  void
  CaseRun::lock_folder()
  {
    std::string error;
    bool        input_error = false;
    if (root)
      try
        {
          lock = std::make_unique<FolderLock>(o.folder);
        }
      catch (const InputError &e)
        {
          error       = e.what();
          input_error = true;
        }
      catch (const OutputError &e)
        {
          error = e.what();
        }
    error       = dealii::Utilities::MPI::broadcast(o.communicator, error, 0);
    input_error = dealii::Utilities::MPI::broadcast(o.communicator, input_error, 0);
    if (!error.empty())
      {
        if (input_error)
          throw InputError(error);
        throw OutputError(error);
      }
  }

  // The largest n/N_c and p/N_v of the current state at the mesh vertices
  // and where it is: above 1 the Boltzmann statistics of the model no
  // longer hold (the carriers are degenerate).
  void
  CaseRun::check_densities()
  {
    const auto &u = solver->state();
    for (const auto &cell : solver->dof_handler().active_cell_iterators())
      {
        const fem::ScaledRegion &r = device->region(cell->material_id());
        for (const unsigned v : cell->vertex_indices())
          {
            const double psi = u[cell->vertex_dof_index(v, 0)], phi_n = u[cell->vertex_dof_index(v, 1)],
                         phi_p = u[cell->vertex_dof_index(v, 2)];
            const double ln_n = psi - phi_n + r.a_n - r.ln_nc, ln_p = phi_p - psi + r.a_p - r.ln_nv;
            const bool   electrons = ln_n >= ln_p;
            const double ratio     = std::exp(std::max(ln_n, ln_p));
            if (!degeneracy || ratio > *degeneracy)
              {
                const auto   x       = cell->vertex(v);
                const double density = ratio * (electrons ? device->materials.at(cell->material_id()).Nc
                                                          : device->materials.at(cell->material_id()).Nv);
                degeneracy           = ratio;
                degeneracy_where     = std::string(electrons ? "electron" : "hole") + " density " +
                                   format_number(density, 3) + " cm-3 = " + format_number(ratio, 3) + " " +
                                   (electrons ? "N_c" : "N_v") + " at x = " + format_number(x[0], 4) +
                                   " um, y = " + format_number(x[1], 4) + " um, at " +
                                   format_fixed(solver->voltage(), 4) + " V";
              }
          }
      }
  }

  void
  CaseRun::build_mesh()
  {
    dealii::TimerOutput::Scope scope(timer, t_mesh);
    tria = std::make_unique<dealii::parallel::shared::Triangulation<2>>(o.communicator);
    build_shared_mesh(c, o.folder + "/mesh.msh", *tria, o.communicator);
    const auto stats = geometry::mesh_statistics(*tria);
    summary["mesh"]  = statistics_json(stats);
    progress.stage(statistics_text(stats));
  }

  // The device in scaled units, the solver, the warnings of meshes that
  // cannot resolve the physics, and the points of an interrupted run.
  void
  CaseRun::set_up_solver()
  {
    const fem::Generation &g = *generation;
    device = make_device(c, g);
    solver = std::make_unique<fem::DriftDiffusionSolver>(*tria, *device, c.numerics);
    summary["unknowns"] = solver->n_dofs();

    summary["warnings"] = guard_rail_warnings(c, *tria);
    if (root)
      for (const auto &w : summary["warnings"])
        std::fprintf(stderr, "backcomb: warning: %s\n", w.get<std::string>().c_str());

    checkpoint = std::make_unique<Checkpoint>(
      o.folder,
      checkpoint_fingerprint(c.echo, c.overrides, o.folder + "/mesh.msh", solver->n_dofs(),
                             dealii::Utilities::MPI::n_mpi_processes(o.communicator)),
      o.communicator);
    resume.stored             = checkpoint->load(o.quiet);
    resume.store              = checkpoint.get();
    summary["resumed_points"] = resume.stored.size();

    width  = solver->width_um();
    active = (!strip && c.device.active_area == DeviceSettings::ActiveArea::gap) ? c.geometry.gap_um : width;
    // The geometry the views of view_in_paraview.py draw.
    summary["period"] = {{"layout", strip ? "test strip" : "comb period"},
                         {"width_um", width},
                         {"absorber_thickness_um", c.geometry.absorber_thickness_um},
                         {"electron_finger_width_um", strip ? json(nullptr) : json(c.geometry.electron_finger_width_um)},
                         {"hole_finger_width_um", strip ? json(nullptr) : json(c.geometry.hole_finger_width_um)},
                         {"gap_um", strip ? json(nullptr) : json(c.geometry.gap_um)}};
  }

  // Equilibrium, the light ramp and the J-V scan; under light the maximum
  // power point and the open-circuit voltage refined.
  void
  CaseRun::solve_light_jv()
  {
    dealii::TimerOutput::Scope scope(timer, t_light);
    const std::string          label = lit ? "light" : "dark";
    dealii::Timer ramp;
    on = fem::start_state(*solver, lit ? 1.0 : 0.0, c.numerics.max_halvings, label, resume,
                          [this](const std::string &s) { progress.stage(s); },
                          [this](const dealii::Vector<double> &eq) { start_dark_jv(&eq); });
    if (on.converged && !dark_thread.joinable())
      start_dark_jv(nullptr); // the start state came from the checkpoint
    ramp_seconds        = ramp.wall_time();
    ramp_factorisations = solver->factorisations();
    light.newton += on.newton_iterations;
    light.halvings += on.halvings;
    if (!on.converged)
      {
        light.failures.push_back(on.diagnostic);
        status = Status::failed;
      }
    else
      {
        generated = solver->generation_current();
        fem::scan(*solver, bias_grid(c), c.jv.reverse, lit ? 1.0 : 0.0, c.jv.step, c.numerics.max_halvings, light,
                  [this](const std::string &s) { progress.line(s); }, label, resume);
        if (lit)
          fem::refine(*solver, light, c.jv.refine_to, c.numerics.max_halvings, resume);
        progress.stage(label + " J-V: " + std::to_string(fem::converged_curve(light).size()) + " converged points" +
                       (lit ? ", maximum power point and open circuit refined" : ""));
      }
    light_assembly       = solver->assembly_seconds();
    light_solve          = solver->linear_solve_seconds();
    light_factorisations = solver->factorisations();
    light_residuals      = solver->residual_assemblies();
  }

  // Fields at the requested biases from the stored states, with the adjoint
  // collection probability under light. Short circuit is always evaluated
  // under light (for the collection check and the dead zone), and listed
  // only when requested.
  void
  CaseRun::write_fields()
  {
    dealii::TimerOutput::Scope scope(timer, t_fields);
    make_folder(o.folder + "/fields");
    std::vector<double> biases  = c.output.fields ? c.output.field_biases : std::vector<double>{};
    const bool          need_sc = lit && std::none_of(biases.begin(), biases.end(),
                                                      [](double v) { return std::abs(v) < 1e-9; });
    if (need_sc)
      biases.push_back(0.0);
    std::vector<PvdDataSet> listed_files;
    for (const double v : biases)
      for (const auto &p : light.points)
        if (p.jv.converged && std::abs(p.jv.voltage - v) < 1e-9)
          {
            solver->set_state(p.state, v, lit ? 1.0 : 0.0);
            const bool        listed = !(need_sc && std::abs(v) < 1e-9);
            const std::string name   = "fields/" + std::string(lit ? "light" : "dark") + "_V" +
                                     format_fixed(v, 4) + (listed ? "" : "_collection") + ".vtu";
            const std::string path = o.folder + "/" + name;
            dealii::Vector<double> fc;
            if (lit)
              {
                dealii::Timer t;
                fc = solver->collection_probability();
                adjoint_seconds += t.wall_time();
                ++adjoint_solves;
              }
            try
              {
                solver->write_fields(path, lit ? &fc : nullptr, c.output.dead_zone_threshold);
              }
            catch (const std::exception &e)
              {
                throw OutputError(e.what());
              }
            if (lit && std::abs(v) < 1e-9)
              analyse_collection(v, p, path, fc);
            if (listed)
              {
                listed_files.push_back({v, name});
                fields.push_back({{"bias_V", v}, {"file", name}});
              }
            else if (!c.output.fields && root)
              std::filesystem::remove(path);
            if (lit && std::abs(v) < 1e-9 && collection.is_object())
              collection["file"] = c.output.fields ? json(name) : json(nullptr);
          }
    if (c.output.fields)
      write_view_fields();
    if (root && c.output.fields)
      write_pvd(o.folder + "/fields.pvd", listed_files);
    progress.stage("fields: " + std::to_string(listed_files.size()) + " bias(es) in " + o.folder + "/fields" +
                   (lit ? ", collection probability by the adjoint solve" : ""));
    if (!c.output.fields && root)
      {
        std::error_code ec;
        std::filesystem::remove(o.folder + "/fields", ec); // only if empty
      }
  }

  // What the views of view_in_paraview.py need besides the fields at the
  // requested biases: the fields at the maximum power point of the light
  // J-V (quasi-Fermi-level splitting, current streamlines) and the fingers.
  void
  CaseRun::write_view_fields()
  {
    if (lit)
      {
        const fem::ScanPoint *best = nullptr;
        for (const auto &p : light.points)
          if (p.jv.converged && p.jv.voltage > 0 &&
              (!best || p.jv.voltage * p.jv.current > best->jv.voltage * best->jv.current))
            best = &p;
        if (best && best->jv.current > 0)
          {
            const std::string name = "fields/light_max_power.vtu";
            solver->set_state(best->state, best->jv.voltage, 1.0);
            try
              {
                solver->write_fields(o.folder + "/" + name, nullptr, c.output.dead_zone_threshold);
              }
            catch (const std::exception &e)
              {
                throw OutputError(e.what());
              }
            summary["max_power_fields"] = {{"bias_V", best->jv.voltage}, {"file", name}};
          }
      }
    if (root && !strip)
      try
        {
          write_finger_bars(o.folder + "/fields/fingers.vtp", 0.5 * c.geometry.electron_finger_width_um,
                            c.geometry.gap_um, 0.5 * c.geometry.hole_finger_width_um,
                            0.12 * c.geometry.absorber_thickness_um);
        }
      catch (const std::exception &e)
        {
          throw OutputError(e.what());
        }
  }

  // The quick look without ParaView: f_c over the period with the
  // dead-zone contour, the vertical scale exaggerated (collection.png/.svg).
  void
  CaseRun::write_collection_picture(const std::string &vtu)
  {
    const double t = c.geometry.absorber_thickness_um;
    FilmMapData  m = film_map_from_fields(vtu, "collection_probability", width, t, 700, 60);
    m.lo = 0, m.hi = 1;
    m.contour      = c.output.dead_zone_threshold;
    m.exaggeration = film_exaggeration(width, t);
    if (!strip)
      m.fingers = {{0.0, 0.5 * c.geometry.electron_finger_width_um},
                   {width - 0.5 * c.geometry.hole_finger_width_um, width}};
    m.title = "Collection probability at short circuit; dead zone (f_c < " +
              format_number(c.output.dead_zone_threshold, 3) + ") inside the white line; fingers grey; vertical scale ×" +
              format_number(m.exaggeration, 3);
    m.colour_label = "collection probability f_c (pairs collected per pair generated)";
    std::vector<std::string> warnings;
    write_film_map(m, o.folder + "/collection", warnings);
    for (const auto &w : warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
  }

  // At short circuit: the current collected according to the adjoint map
  // against the terminal current (two independent routes to Jsc), and the
  // dead zone from the written field file.
  void
  CaseRun::analyse_collection(const double v, const fem::ScanPoint &sc, const std::string &vtu,
                             const dealii::Vector<double> &fc)
  {
    const double collected = solver->collected_current(fc);
    if (!generation->wavelengths_nm().empty())
      {
        // The spectral response from the same map, and optionally from the
        // map of the cell in the dark at 0 V (linear response).
        QuantumEfficiency q;
        q.wavelength_nm   = generation->wavelengths_nm();
        q.photon_flux     = generation->incident_photon_flux();
        q.eqe             = spectral_collection(*solver, *generation, fc, o.communicator);
        q.bias_light_suns = c.illumination.intensity_suns;
        const auto f      = generation->spectral_fractions();
        q.absorbed        = f.absorbed;
        q.reflected       = f.reflected;
        q.transmitted     = f.transmitted;
        if (c.output.eqe_without_bias_light)
          {
            dealii::Timer t;
            solver->solve_equilibrium();
            q.eqe_no_bias_light =
              spectral_collection(*solver, *generation, solver->collection_probability(), o.communicator);
            adjoint_seconds += t.wall_time();
            ++adjoint_solves;
            solver->set_state(sc.state, sc.jv.voltage, 1.0);
          }
        eqe = std::move(q);
      }
    if (active < width && collected != 0)
      {
        // The active width is the gap: x from the electron finger's edge.
        const double gap_start = 0.5 * c.geometry.electron_finger_width_um;
        active_share           = solver->collected_current(fc, gap_start, gap_start + active) / collected;
      }
    collection             = {{"bias_V", 0.0},
                              {"collected_current_mA_per_cm2", collected},
                              {"terminal_current_mA_per_cm2", sc.jv.current},
                              {"relative_difference",
                               sc.jv.current != 0 ? (collected - sc.jv.current) / sc.jv.current : 0.0}};
    if (!root)
      return;
    try
      {
        const std::string contour = "fields/dead_zone_contour_V" + format_fixed(v, 4) + ".vtp";
        const DeadZone    d       = analyse_dead_zone(vtu, c.output.dead_zone_threshold, o.folder + "/" + contour);
        dead_zone                 = dead_zone_json(d, contour);
        write_collection_picture(vtu);
        progress.stage("dead zone at short circuit: " + format_number(100 * d.area_fraction, 3) +
                       " % of the absorber has f_c < " + format_number(d.threshold, 3));
      }
    catch (const std::exception &e)
      {
        throw OutputError(e.what());
      }
  }

  // Where the power goes: the balance at short circuit, the maximum power
  // point, open circuit and the requested biases, from the stored states
  // (or a solve from the nearest one).
  void
  CaseRun::compute_power_balance(const fem::JVMetrics &m0)
  {
    dealii::TimerOutput::Scope scope(timer, t_losses);
    if (m0.valid)
      {
        const auto curve = fem::converged_curve(light);
        const auto best  = std::max_element(curve.begin(), curve.end(), [](const auto &a, const auto &b) {
          return a.voltage * a.current < b.voltage * b.current;
        });
        balance_at("short_circuit", 0.0);
        balance_at("max_power", best->voltage);
        balance_at("open_circuit", m0.Voc);
        check_densities();
      }
    for (const double v : c.output.loss_biases)
      balance_at("bias_" + format_fixed(v, 4), v);
    progress.stage("losses: power balance at " + std::to_string(loss_points.size()) + " operating points");
  }

  void
  CaseRun::balance_at(const std::string &name, const double v)
  {
    if (!fem::go_to(*solver, light, v, c.numerics.max_halvings, resume))
      {
        light.failures.push_back("power balance at " + name + " (" + format_fixed(v, 4) +
                                 " V): no converged state");
        return;
      }
    LossPoint p{name, solver->power_balance()};
    if (solver->transports_photons())
      {
        p.photons                       = solver->photon_balance();
        p.optical_generation_mA_per_cm2 = solver->generation_current();
      }
    loss_points.push_back(p);
  }

  // Suns-V_oc: open circuit at decreasing light, from the full light's
  // (fem::open_circuits).
  void
  CaseRun::compute_suns_voc(const fem::JVMetrics &m0)
  {
    dealii::TimerOutput::Scope scope(timer, t_losses);
    if (!m0.valid || c.jv.suns_voc.empty())
      return;
    if (!fem::go_to(*solver, light, m0.Voc, c.numerics.max_halvings, resume))
      {
        light.failures.push_back("suns-Voc: the open circuit of the light J-V at " + format_number(m0.Voc) +
                                 " V could not be solved again to start from");
        suns_voc_failed = true;
        return;
      }
    const double slope = fem::slope_at_open_circuit(fem::converged_curve(light));
    for (const fem::OpenCircuit &oc :
         fem::open_circuits(*solver, c.jv.suns_voc, slope, c.numerics.max_halvings))
      {
        light.newton += oc.newton_iterations;
        if (!oc.converged)
          {
            light.failures.push_back("suns-Voc at light factor " + format_number(oc.light) + ": " + oc.diagnostic);
            suns_voc_failed = true;
            break;
          }
        suns_voc.emplace_back(oc.light, oc.voltage);
      }
    progress.stage("suns-Voc: open circuit at " + std::to_string(suns_voc.size()) + " light levels");
  }

  // The dark J-V over the same biases, from equilibrium: where a core is
  // free, in a thread of its own from the moment the light J-V's solver
  // has found equilibrium, on a second solver; else here, on the run's
  // solver. The second solver has its own communicator, starts from that
  // equilibrium (or solves it again in its thread after a start from the
  // checkpoint), and factorises with PETSc's own LU, which calls no BLAS
  // (fem/blas_lock.h: with MUMPS in both threads taking turns, the light
  // J-V waited for the dark one's factorisations so often that the run
  // gained little). The light J-V and everything from it are the same bit
  // for bit either way; the dark currents agree to the Newton tolerance
  // (tests/threaded_dark_cli.sh).
  void
  CaseRun::start_dark_jv(const dealii::Vector<double> *equilibrium)
  {
    // Photon recycling as transport is left out: PETSc's Anderson mixing
    // of its outer iteration calls LAPACK without a turn (fem/blas_lock.h).
    if (!lit || !c.jv.dark || solver->transports_photons() || !second_core_free(o.communicator))
      return;
    MPI_Comm_dup(o.communicator, &dark_comm);
    dark_solver = std::make_unique<fem::DriftDiffusionSolver>(*tria, *device, c.numerics, dark_comm,
                                                         MATSOLVERPETSC);
    if (equilibrium)
      dark_solver->adopt_equilibrium(*equilibrium);
    dark_thread = std::thread([this] {
      try
        {
          scan_dark(*dark_solver);
        }
      catch (const DarkScanStopped &)
        {
        }
      catch (...)
        {
          dark_error = std::current_exception();
        }
    });
  }

  void
  CaseRun::scan_dark(fem::DriftDiffusionSolver &s)
  {
    const auto            t0     = std::chrono::steady_clock::now();
    const unsigned        before = s.factorisations();
    const fem::StepReport eq     = fem::start_state(s, 0.0, c.numerics.max_halvings, "dark", resume);
    dark.newton += eq.newton_iterations;
    if (eq.converged)
      fem::scan(s, bias_grid(c), c.jv.reverse, 0.0, c.jv.step, c.numerics.max_halvings, dark,
                [this](const std::string &line) {
                  if (stop_dark)
                    throw DarkScanStopped();
                  progress.line(line);
                },
                "dark", resume);
    else
      dark.failures.push_back(eq.diagnostic);
    dark_factorisations = s.factorisations() - before;
    dark_seconds        = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  }

  void
  CaseRun::solve_dark_jv()
  {
    dealii::TimerOutput::Scope scope(timer, t_dark);
    if (!lit || !c.jv.dark)
      return;
    if (dark_thread.joinable())
      {
        dark_thread.join();
        if (dark_error)
          std::rethrow_exception(dark_error);
      }
    else
      scan_dark(*solver);
    progress.stage("dark J-V: " + std::to_string(fem::converged_curve(dark).size()) + " converged points" +
                   (dark_solver ? " (in a thread beside the light J-V)" : ""));
  }

  void
  CaseRun::scan_with_moving_ions()
  {
    dealii::TimerOutput::Scope scope(timer, t_ions);
    if (c.output.fields)
      make_folder(o.folder + "/fields");
    hysteresis = run_hysteresis_scan(*solver, c, o.folder, lit ? 1.0 : 0.0, c.output.fields,
                                     [this](const std::string &s) { progress.stage(s); });
    if (hysteresis.ran && !hysteresis.converged && status == Status::converged)
      status = Status::partial;
  }

  // The whole comb cell (fingers and contact resistance, Electrodes
  // section) and the series resistance from suns-Voc, both from the
  // period's light J-V.
  void
  CaseRun::evaluate_comb_cell()
  {
    dealii::TimerOutput::Scope scope(timer, t_cell);
    const std::vector<fem::JVPoint> curve = increasing_curve(light);
    const fem::CombWidths widths{c.geometry.electron_finger_width_um, c.geometry.hole_finger_width_um, 2 * width};
    try
      {
        if (!c.electrodes.ideal())
          {
            // Terminal voltages: the period's biases from 0 to the first one
            // past open circuit.
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
                         {"metrics", metrics_json(cell_metrics,
                                                  cell_metrics.valid ? std::optional<double>(cell_metrics.Jsc)
                                                                     : std::nullopt,
                                                  active_scale(), input_power)}};
            if (cell_mpp)
              cell_json["at_max_power"] = cell_at_max_power_json(*cell_mpp);
          }
        if (suns_voc.size() >= 2)
          {
            std::vector<fem::SunsVocPoint> pts;
            for (const auto &[s, v] : suns_voc)
              pts.push_back({s, v});
            const fem::PseudoJV              pseudo(pts, metrics.Jsc);
            const fem::SeriesResistance      film  = fem::series_resistance(pseudo, curve, input_power);
            const fem::SeriesResistanceSplit split = fem::split_series_resistance(pseudo, curve, widths, c.electrodes);
            rs_json = {{"total_ohm_cm2", split.total},
                       {"film_ohm_cm2", split.film},
                       {"contacts_ohm_cm2", split.contacts},
                       {"fingers_ohm_cm2", split.fingers},
                       {"pseudo_voltage_at_Jmp_V", film.pseudo_voltage_at_jmp},
                       {"pseudo_metrics", metrics_json(film.pseudo, film.pseudo.Jsc, active_scale(), input_power)}};
          }
      }
    catch (const std::exception &e)
      {
        light.failures.push_back(std::string("comb cell and series resistance: ") + e.what() +
                                 (dynamic_cast<const std::domain_error *>(&e)
                                    ? " (extend J-V scan/Suns-Voc intensities to lower light, or the J-V "
                                      "scan to higher voltage)"
                                    : ""));
        if (status == Status::converged)
          status = Status::partial;
      }
  }

  // Failed: no metrics (or no start state). Partial: metrics, but some
  // requested point or post-processing step failed.
  void
  CaseRun::settle_status()
  {
    if (lit && !metrics.valid)
      status = Status::failed;
    for (const auto &p : light.points)
      if (!p.jv.converged && status == Status::converged && metrics.valid)
        status = Status::partial;
    for (const auto &p : dark.points)
      if (!p.jv.converged && status == Status::converged)
        status = Status::partial;
    if (suns_voc_failed && status == Status::converged)
      status = Status::partial;

    // The physical bounds of the results (simulator/bounds.h).
    ResultFigures r;
    r.band_gap_eV                 = c.absorber.band_gap;
    r.temperature_K               = c.device.temperature;
    r.incident_mW_per_cm2         = input_power;
    r.photon_current_mA_per_cm2   = photon_limit;
    r.absorbed_current_mA_per_cm2 = generated;
    r.active_scale                = active_scale().value_or(1.0);
    r.degeneracy                  = degeneracy;
    r.degeneracy_where            = degeneracy_where;
    if (lit && metrics.valid)
      {
        r.Jsc  = metrics.Jsc;
        r.Voc  = metrics.Voc;
        r.Pmax = metrics.Pmax;
      }
    for (auto &f : check_bounds(r))
      findings.push_back(std::move(f));
    if (root)
      for (const auto &f : findings)
        std::fprintf(stderr, "backcomb: %s: %s\n", f.violated ? "result outside physical bounds" : "warning",
                     f.message.c_str());
  }

  // The absorber's photon recycling: the model and B (with the van
  // Roosbroeck-Shockley value when it was computed); with transport the
  // recycled fraction at the maximum power point, the external radiative
  // efficiency at open circuit and the detailed-balance limit of a step
  // absorber at the band gap (W. Shockley, H. J. Queisser, J. Appl. Phys.
  // 32 (1961) 510) for comparison.
  json
  CaseRun::photon_recycling_json() const
  {
    const fem::Material &a = c.absorber;
    json j = {{"model", a.recycling_transport ? "transport" : "local"}, {"B_cm3_per_s", a.B_rad},
              {"B_source", a.B_from_absorption ? "absorption spectrum (van Roosbroeck-Shockley)" : "entry"}};
    if (!a.recycling_transport)
      {
        j["probability"] = a.photon_recycling;
        return j;
      }
    if (!a.B_from_absorption)
      j["B_van_roosbroeck_shockley_cm3_per_s"] = fem::radiative_coefficient(absorber_emission(c), a);
    for (const auto &p : loss_points)
      if (p.photons && (p.name == "max_power" || p.name == "open_circuit"))
        {
          const json ph = photons_json(p);
          if (p.name == "max_power")
            j["recycled_fraction_at_max_power"] = ph["recycled_fraction"];
          else
            {
              j["recycled_fraction_at_open_circuit"]             = ph["recycled_fraction"];
              j["external_radiative_efficiency_at_open_circuit"] = ph["external_radiative_efficiency"];
              // The film's radiative limit by the reciprocity between
              // emission and collection, V_oc = V_oc,rad + kT/q ln(Q_e),
              // Q_e the photons leaving (top and substrate) per pair the
              // light makes (U. Rau, Phys. Rev. B 76 (2007) 085303; the
              // relation from memory).
              const double out = as_current_mA_per_cm2(p.photons->escaped_top + p.photons->lost_substrate);
              if (out > 0 && p.optical_generation_mA_per_cm2 > 0)
                j["radiative_limit_Voc_V"] = p.balance.bias_V - fem::thermal_voltage(c.device.temperature) *
                                                                  std::log(out / p.optical_generation_mA_per_cm2);
            }
        }
    if (lit)
      {
        const fem::DetailedBalanceLimit sq =
          fem::detailed_balance_limit(fem::read_spectrum(c.illumination.spectrum_file), a.band_gap, c.device.temperature);
        const double S = c.illumination.intensity_suns;
        j["detailed_balance_step_absorber"] = {
          {"band_gap_eV", a.band_gap},
          {"Jsc_mA_per_cm2", S * sq.Jsc_mA_per_cm2},
          {"Voc_V", fem::thermal_voltage(c.device.temperature) * std::log1p(S * sq.Jsc_mA_per_cm2 / sq.J0_mA_per_cm2)}};
      }
    j["outer_iterations"] =
      solver ? json(solver->recycling_iterations() + (dark_solver ? dark_solver->recycling_iterations() : 0u))
             : json(nullptr);
    j["operator_bytes"]   = solver ? json(solver->recycling_operator_bytes()) : json(nullptr);
    return j;
  }

  json
  CaseRun::summary_of_results() const
  {
    json s = summary;
    s["status"]   = to_string(status);
    s["failures"] = light.failures;
    for (const auto &f : dark.failures)
      s["failures"].push_back(f);
    const std::optional<double> jsc = lit ? short_circuit_current(fem::converged_curve(light)) : std::nullopt;
    s["metrics"] = lit ? metrics_json(metrics, jsc, active_scale(), input_power) : json(nullptr);
    s["points"]  = json::array();
    add_points(s["points"], lit ? "light" : "dark", light, bias_grid(c));
    if (lit && c.jv.dark)
      add_points(s["points"], "dark", dark, bias_grid(c));
    s["footprint_width_um"]            = width;
    s["active_width_um"]               = active;
    s["active_width_collected_share"]  = active_share ? json(*active_share) : json(nullptr);
    s["generation_current_mA_per_cm2"] = generated;
    s["collection_efficiency"]         = (jsc && generated > 0) ? json(*jsc / generated) : json(nullptr);
    // Iterations count every linear solve (Newton and chord steps);
    // factorisations only the fresh Jacobians.
    s["newton"] = {{"light_iterations", light.newton},
                   {"light_halvings", light.halvings},
                   {"light_factorisations", light_factorisations},
                   {"light_start_factorisations", ramp_factorisations},
                   {"light_start_iterations", on.newton_iterations},
                   {"light_residual_assemblies", light_residuals},
                   {"dark_iterations", dark.newton},
                   {"dark_halvings", dark.halvings},
                   {"dark_factorisations", dark_factorisations},
                   {"dark_in_own_thread", dark_solver != nullptr},
                   {"lu_package", solver ? json(solver->lu_package_in_use()) : json(nullptr)},
                   {"dark_lu_package", dark_solver ? json(dark_solver->lu_package_in_use())
                                                   : solver ? json(solver->lu_package_in_use()) : json(nullptr)},
                   {"factorisations", (solver ? solver->factorisations() : 0u) +
                                        (dark_solver ? dark_solver->factorisations() : 0u)}};
    s["fields"]         = fields;
    s["collection_map"] = collection;
    s["eqe"]            = eqe ? eqe_json(*eqe, "eqe.csv") : json(nullptr);
    s["dead_zone"]      = dead_zone;
    s["light_points"]   = light.points.size();
    s["losses"]   = loss_points.empty() ? json(nullptr) : losses_json(loss_points, generation->optical_budget());
    s["suns_voc"] = json::array();
    for (const auto &[level, v] : suns_voc)
      s["suns_voc"].push_back({{"light_factor", level}, {"Voc_V", v}});
    s["photon_recycling"]  = photon_recycling_json();
    s["mobile_ions"]       = solver ? mobile_ions_json(c, *solver) : json(nullptr);
    s["hysteresis_scan"]   = hysteresis.summary;
    s["cell"]              = cell_json;
    s["series_resistance"] = rs_json;
    if (cell_mpp && s["losses"].is_object())
      s["losses"]["electrodes_at_cell_max_power"] = {
        {"fingers", cell_mpp->hole_finger_loss + cell_mpp->electron_finger_loss},
        {"contact_resistance", cell_mpp->hole_contact_loss + cell_mpp->electron_contact_loss}};
    s["processes"] = dealii::Utilities::MPI::n_mpi_processes(o.communicator);
    s["incident_power_mW_per_cm2"]           = lit ? json(input_power) : json(nullptr);
    s["incident_photon_current_mA_per_cm2"] = photon_limit ? json(*photon_limit) : json(nullptr);
    s["bounds"]                              = json::array();
    for (const auto &f : findings)
      {
        s["warnings"].push_back(f.message);
        s["bounds"].push_back({{"check", f.check}, {"violated", f.violated}, {"message", f.message}});
      }

    // Timings: the phases of the timer, the solver's own split of the light
    // J-V, and per-solve figures.
    const auto wall = timer.get_summary_data(dealii::TimerOutput::total_wall_time);
    auto phase = [&wall](const char *name) {
      const auto it = wall.find(name);
      return it == wall.end() ? 0.0 : it->second;
    };
    json &t = s["timings_s"];
    for (const char *name : {t_mesh, t_light, t_fields, t_losses, t_dark, t_cell, t_ions})
      t[name] = phase(name);
    // The dark J-V's own time (in its thread, the phase is only the wait).
    if (lit && c.jv.dark)
      t[t_dark] = dark_seconds;
    t["light_start"]        = ramp_seconds;
    t["light_assembly"]     = light_assembly;
    t["light_linear_solve"] = light_solve;
    t["adjoint_per_solve"]  = adjoint_solves > 0 ? json(adjoint_seconds / adjoint_solves) : json(nullptr);
    t["newton_step_light"]  = light.newton > 0 ? json(phase(t_light) / light.newton) : json(nullptr);
    // The floor of one bias: one numerical factorisation of the Jacobian.
    t["factorisation_mean"] = (solver && solver->factorisations() > 0)
                                ? json(solver->factorisation_seconds() / solver->factorisations())
                                : json(nullptr);
    return s;
  }

  // jv.csv, losses.csv and the loss chart, then summary.json last: it marks
  // a finished run. The checkpoint goes once everything is written.
  void
  CaseRun::write_results()
  {
    std::vector<std::string> plot_warnings;
    if (!loss_points.empty())
      {
        std::optional<ElectrodeLoss> electrode_loss;
        if (cell_mpp)
          electrode_loss = ElectrodeLoss{cell_mpp->terminal_voltage,     cell_mpp->current,
                                         cell_mpp->output_power,         cell_mpp->hole_finger_loss,
                                         cell_mpp->electron_finger_loss, cell_mpp->hole_contact_loss,
                                         cell_mpp->electron_contact_loss};
        const auto optics = generation->optical_budget();
        write_file_atomically(o.folder + "/losses.csv", losses_csv(loss_points, optics, width, electrode_loss));
        if (const std::string photons = photons_csv(loss_points); !photons.empty())
          write_file_atomically(o.folder + "/photons.csv", photons);
        const auto mpp = std::find_if(loss_points.begin(), loss_points.end(),
                                      [](const LossPoint &p) { return p.name == "max_power"; });
        if (mpp != loss_points.end())
          write_loss_chart(*mpp, optics, electrode_loss,
                           "Where the power goes at the maximum power point (" +
                             format_fixed(mpp->balance.bias_V, 4) + " V)",
                           o.folder + "/losses", plot_warnings);
      }
    for (const auto &w : plot_warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    write_file_atomically(o.folder + "/jv.csv", jv_csv(light, dark, width, hysteresis.columns));
    if (eqe)
      {
        write_file_atomically(o.folder + "/eqe.csv", eqe_csv(*eqe));
        SpectralPlotData plot;
        plot.wavelength_nm = eqe->wavelength_nm;
        plot.title         = "Quantum efficiency at short circuit";
        plot.curves.push_back({"EQE, " + format_number(eqe->bias_light_suns, 3) + " sun bias", eqe->eqe});
        if (eqe->eqe_no_bias_light)
          plot.curves.push_back({"EQE, dark", *eqe->eqe_no_bias_light});
        plot.curves.push_back({"absorptance", eqe->absorbed});
        std::vector<std::string> eqe_warnings;
        write_spectral_plots(plot, o.folder + "/eqe", eqe_warnings);
        for (const auto &w : eqe_warnings)
          std::fprintf(stderr, "backcomb: %s\n", w.c_str());
      }
    {
      JVPlotData jv;
      for (const auto &p : fem::converged_curve(light))
        (lit ? jv.light_v : jv.dark_v).push_back(p.voltage), (lit ? jv.light_j : jv.dark_j).push_back(p.current);
      for (const auto &p : fem::converged_curve(dark))
        jv.dark_v.push_back(p.voltage), jv.dark_j.push_back(p.current);
      if (metrics.valid)
        jv.mpp_v = metrics.Vmp, jv.mpp_j = metrics.Jmp;
      for (const fem::HysteresisCurve &curve : hysteresis.curves)
        {
          JVPlotData::Curve scan;
          scan.label = curve.direction + " scan, " + format_number(c.hysteresis.rate, 3) + " V/s";
          for (const fem::HysteresisPoint &p : curve.points)
            scan.v.push_back(p.voltage), scan.j.push_back(p.current);
          jv.scans.push_back(scan);
        }
      std::vector<std::string> jv_warnings;
      write_jv_plots(jv, o.folder + "/jv", jv_warnings);
      for (const auto &w : jv_warnings)
        std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    }
    if (collection.is_object() && collection["file"].is_string())
      write_view_script(o.folder); // the views need the collection probability
    json s                  = summary_of_results();
    s["timings_s"]["total"] = total_time.wall_time();
    // File names and messages are user text: a byte that is not UTF-8
    // becomes U+FFFD instead of stopping the dump (the case text itself is
    // checked at the edge, base/text.h).
    write_json_atomically(o.folder + "/summary.json", s);
    checkpoint->remove();
  }

  void
  CaseRun::print_report() const
  {
    const auto &m = metrics;
    if (m.valid)
      std::printf("Jsc %.3f mA/cm2  Voc %.4f V  FF %.4f  PCE %.3f %% (footprint), %s %% (active)  "
                  "collection %.4f\n",
                  m.Jsc, m.Voc, m.FF, input_power > 0 ? 100 * m.Pmax / input_power : 0.0,
                  input_power > 0 && active_scale()
                    ? format_fixed(100 * m.Pmax * *active_scale() / input_power, 3).c_str()
                    : "n/a",
                  generated > 0 ? m.Jsc / generated : 0.0);
    else if (lit)
      std::printf("J-V metrics not available: the light J-V did not converge where they are needed\n");
    if (cell_metrics.valid)
      std::printf("comb cell with %.3g mm fingers: FF %.4f  PCE %.3f %% (footprint); electrodes take %.3f mW/cm2 "
                  "at its maximum power point\n",
                  c.electrodes.finger_length_mm, cell_metrics.FF,
                  input_power > 0 ? 100 * cell_metrics.Pmax / input_power : 0.0,
                  cell_mpp ? cell_mpp->hole_finger_loss + cell_mpp->electron_finger_loss +
                               cell_mpp->hole_contact_loss + cell_mpp->electron_contact_loss
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
    for (const auto &f : light.failures)
      std::fprintf(stderr, "backcomb: %s\n", f.c_str());
    for (const auto &f : dark.failures)
      std::fprintf(stderr, "backcomb: %s\n", f.c_str());
    std::printf("status %s; wrote %s/jv.csv, %s/summary.json%s\n", to_string(status).c_str(), o.folder.c_str(),
                o.folder.c_str(), fields.empty() ? "" : " and fields.pvd");
  }

  namespace
  {
    // The cells near the electron finger's edge (where the mesh is finest
    // laterally), in a window two film thicknesses to either side, at
    // true scale; a test strip shows its left end.
    MeshPictureData
    edge_of_mesh(const Case &c, const dealii::Triangulation<2> &tria)
    {
      const bool   strip = c.geometry.layout == geometry::GeometryParameters::Layout::test_strip;
      const double t     = c.geometry.absorber_thickness_um;
      const double edge  = strip ? 0.0 : 0.5 * c.geometry.electron_finger_width_um;
      MeshPictureData d;
      d.x_lo = std::max(0.0, edge - 2 * t), d.x_hi = edge + 2 * t;
      d.y_lo = 1e300, d.y_hi = -1e300;
      for (const auto &cell : tria.active_cell_iterators())
        for (const unsigned v : cell->vertex_indices())
          d.y_lo = std::min(d.y_lo, cell->vertex(v)[1]), d.y_hi = std::max(d.y_hi, cell->vertex(v)[1]);
      for (const auto &cell : tria.active_cell_iterators())
        {
          double lo = 1e300, hi = -1e300;
          for (const unsigned v : cell->vertex_indices())
            lo = std::min(lo, cell->vertex(v)[0]), hi = std::max(hi, cell->vertex(v)[0]);
          if (hi < d.x_lo || lo > d.x_hi)
            continue;
          // deal.II numbers a quadrilateral's vertices lexicographically.
          std::array<double, 8> q;
          const unsigned        order[4] = {0, 1, 3, 2};
          for (unsigned k = 0; k < 4; ++k)
            q[2 * k] = cell->vertex(order[k])[0], q[2 * k + 1] = cell->vertex(order[k])[1];
          d.cells.push_back(q);
        }
      if (!strip)
        d.fingers = {{0.0, edge}};
      d.title = (strip ? std::string("Mesh at the strip's left end") : "Mesh near the electron finger's edge (x = " +
                                                                       format_number(edge, 4) + " µm)") +
                ": " + std::to_string(d.cells.size()) + " of " + std::to_string(tria.n_active_cells()) +
                " cells, true scale" + (strip ? "" : "; finger grey");
      return d;
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
    std::printf("%s\n", statistics_text(geometry::mesh_statistics(tria)).c_str());
    std::vector<std::string> warnings;
    const bool               picture = !write_mesh_picture(edge_of_mesh(c, tria), o.folder + "/mesh", warnings).empty();
    for (const auto &w : warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    std::printf("wrote %s/mesh.msh, %s/mesh.vtu%s\n", o.folder.c_str(), o.folder.c_str(),
                picture ? (" and " + o.folder + "/mesh.png/.svg").c_str() : "");
    return exit_ok;
  }

  int
  run_solve(const Case &c, const RunOptions &o)
  {
    return CaseRun(c, o).run();
  }
} // namespace backcomb::simulator
