// Benchmark (prints figures; not a test): the cost of photon recycling as
// transport on the demo at its largest candidate gap (70 um), against the
// same case with the local model: the light J-V and the whole solve, the
// outer iterations, and the memory of the transport operator.
// Run: build/tests/benchmark_recycling [path/to/cases/demo.prm]
#include "tests/benchmark_run.h"

#include <deal.II/base/mpi.h>

#include <nlohmann/json.hpp>

#include <cstdio>

namespace
{
  using backcomb::benchmark::Run;

  Run
  run(const std::string &demo, const std::vector<std::string> &overrides)
  {
    return backcomb::benchmark::run(demo, overrides, "backcomb-benchmark-recycling");
  }

  double
  light_jv(const Run &r)
  {
    return r.s["timings_s"]["light"].get<double>();
  }
} // namespace

int
main(int argc, char **argv)
{
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  const std::string demo = argc > 1 ? argv[1] : std::string(BACKCOMB_SOURCE_DIR) + "/cases/demo.prm";
  const std::string radiative = "Absorber/Recombination/Radiative/";
  const Run local = run(demo, {"Geometry/Gap=70"});
  const Run transport =
    run(demo, {"Geometry/Gap=70", radiative + "Photon recycling=transport", radiative + "Photon recycling probability=0"});
  const auto &p = transport.s["photon_recycling"];
  for (const auto *r : {&local, &transport})
    std::printf("%s: exit %d, light J-V %.2f s, solve %.2f s, PCE %.3f %%, collection %.4f\n",
                r == &local ? "local (as shipped)" : "transport", r->code, light_jv(*r), r->wall,
                r->s["metrics"]["PCE_percent"].get<double>(), r->s["collection_efficiency"].get<double>());
  std::printf("transport: %d outer iterations in the whole solve, recycled fraction %.4f\n",
              p["outer_iterations"].get<int>(), p["recycled_fraction_at_max_power"].get<double>());
  std::printf("\n| figure | measured | target |\n|---|---|---|\n");
  std::printf("| light J-V with transport / without, demo at 70 um | %.2f | <= 2 |\n", light_jv(transport) / light_jv(local));
  std::printf("| whole solve with transport / without | %.2f | - |\n", transport.wall / local.wall);
  std::printf("| memory of the transport operator | %.1f MB | <= 200 MB |\n", p["operator_bytes"].get<double>() / 1e6);
  return local.code != 0 ? local.code : transport.code;
}
