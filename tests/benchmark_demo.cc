// Benchmark (prints figures; not a test): the demo case at a 50 um gap,
// full light J-V from -0.1 to 1.3 V in 0.04 V steps (36 biases, plus the
// refinement near the maximum power point and V_oc; no dark sweep, no fields). Reports wall time, Newton
// iterations per bias point, unknowns, the time split and the peak resident
// memory. Run: build/tests/benchmark_demo [path/to/cases/demo.prm]
#include "simulator/case_file.h"
#include "simulator/case_run.h"

#include <deal.II/base/mpi.h>

#include <nlohmann/json.hpp>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sys/resource.h>

int
main(int argc, char **argv)
{
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  const std::string demo = argc > 1 ? argv[1] : std::string(BACKCOMB_SOURCE_DIR) + "/cases/demo.prm";
  const auto        out  = std::filesystem::temp_directory_path() / "backcomb-benchmark";
  std::filesystem::remove_all(out);
  const backcomb::simulator::Case c = backcomb::simulator::read_case(
    demo, {"Geometry/Gap=50", "J-V scan/Dark scan=false", "J-V scan/Voltage step=0.04",
           "Output/Write fields=false"});
  backcomb::simulator::RunOptions o;
  o.folder       = out.string();
  o.quiet        = true;
  const auto t0  = std::chrono::steady_clock::now();
  const int  code = backcomb::simulator::run_solve(c, o);
  const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  std::ifstream in(out / "summary.json");
  const auto    s = nlohmann::json::parse(in);
  rusage        ru{};
  getrusage(RUSAGE_SELF, &ru);
  const double points = s["light_points"];
  const double newton = s["newton"]["light_iterations"];
  const double light  = s["timings_s"]["light"], assembly = s["timings_s"]["light_assembly"],
               solve  = s["timings_s"]["light_linear_solve"];
  std::printf("demo at 50 um gap (exit code %d, status %s)\n", code, s["status"].get<std::string>().c_str());
  std::printf("  cells %d, unknowns %d\n", int(s["mesh"]["cells"]), int(s["unknowns"]));
  std::printf("  wall time %.2f s (light J-V %.2f s: assembly %.2f s, linear solve %.2f s, other %.2f s)\n",
              wall, light, assembly, solve, light - assembly - solve);
  std::printf("  bias points %.0f, Newton iterations %.0f (%.2f per point incl. light ramp)\n", points,
              newton, newton / points);
  std::printf("  adjoint solve %.3f s vs one Newton step %.3f s (ratio %.2f)\n",
              double(s["timings_s"]["adjoint_per_solve"]), double(s["timings_s"]["newton_step_light"]),
              double(s["timings_s"]["adjoint_per_solve"]) / double(s["timings_s"]["newton_step_light"]));
  std::printf("  peak resident memory %.1f MB\n", ru.ru_maxrss / 1024.0);
  if (s["metrics"].is_object() && s["metrics"]["Voc_V"].is_number())
    std::printf("  Jsc %.3f mA/cm2, Voc %.4f V, FF %.4f, PCE %.3f %%\n", double(s["metrics"]["Jsc_mA_per_cm2"]),
                double(s["metrics"]["Voc_V"]), double(s["metrics"]["FF"]), double(s["metrics"]["PCE_percent"]));
  std::filesystem::remove_all(out);
  return code;
}
