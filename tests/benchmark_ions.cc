// Benchmark (prints figures; not a test): a forward-and-reverse hysteresis
// scan of the demo with mobile ions (1e17 cm^-3, D = 1e-12 cm^2/s; contact cells of 2 nm,
// below the ions' Debye length of 18.9 nm) at one
// scan rate, against the steady-state light J-V of the same case: wall
// time, time steps and Newton iterations (target: the scan within 5 times
// the steady-state J-V).
// Run: build/tests/benchmark_ions [path/to/cases/demo.prm] [scan rate V/s]
#include "tests/benchmark_run.h"

#include <deal.II/base/mpi.h>

#include <nlohmann/json.hpp>

#include <cstdio>
#include <cstdlib>

int
main(int argc, char **argv)
{
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  const std::string demo = argc > 1 ? argv[1] : std::string(BACKCOMB_SOURCE_DIR) + "/cases/demo.prm";
  const std::string rate = argc > 2 ? argv[2] : "0.1";
  const auto r = backcomb::benchmark::run(demo,
                                          {"Absorber/Mobile ions/Density=1e17", "Mesh/Smallest cell=2", "Hysteresis scan/Scan rate=" + rate,
                                           "J-V scan/Dark scan=false", "Output/Write fields=false"},
                                          "backcomb-benchmark-ions");
  const auto  &t = r.s["timings_s"];
  const auto  &h = r.s["hysteresis_scan"];
  const double light = t["light"].get<double>(), scan = t["hysteresis_scan"].get<double>();
  const double steps = h["time_steps"].get<double>();
  std::printf("demo with mobile ions 1e17 cm^-3, scan at %s V/s (%s), exit code %d\n", rate.c_str(),
              h["directions"].get<std::string>().c_str(), r.code);
  std::printf("steady-state light J-V (ions at rest at every bias): %.1f s, %d points\n", light,
              r.s["light_points"].get<int>());
  std::printf("hysteresis scan: %.1f s, %.0f time steps (%d rejected), %d Newton iterations (%.1f per step), "
              "steps %.2e .. %.2e s, ion number drift %.1e, hysteresis index %s\n",
              scan, steps, h["rejected_steps"].get<int>(), h["newton_iterations"].get<int>(),
              h["newton_iterations"].get<double>() / std::max(1.0, steps), h["smallest_step_s"].get<double>(),
              h["largest_step_s"].get<double>(), h["ion_number_drift"].get<double>(), h["hysteresis_index"].dump().c_str());
  for (const auto &c : h["curves"])
    std::printf("  %-8s PCE %s %%\n", c["direction"].get<std::string>().c_str(),
                c["metrics"].is_null() ? "null" : c["metrics"]["PCE_percent"].dump().c_str());
  std::printf("steady-state PCE %s %%, collection efficiency %s\n", r.s["metrics"]["PCE_percent"].dump().c_str(),
              r.s["collection_efficiency"].dump().c_str());
  std::printf("\n| figure | measured | target |\n|---|---|---|\n");
  std::printf("| scan (both directions) / steady-state light J-V | %.2f (%.1f s / %.1f s) | <= 5 |\n", scan / light,
              scan, light);
  std::printf("| whole solve | %.1f s | - |\n", r.wall);
  return r.code;
}
