// One `solve` of a case for the benchmarks (not a test): the wall time, the
// exit code and the summary.json it wrote, in a scratch folder removed
// afterwards.
#pragma once

#include "simulator/case_file.h"
#include "simulator/case_run.h"

#include <nlohmann/json.hpp>

#include <chrono>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

namespace backcomb::benchmark
{
  struct Run
  {
    int            code = 0;
    double         wall = 0;
    nlohmann::json s;
  };

  inline Run
  run(const std::string &case_file, const std::vector<std::string> &overrides, const std::string &scratch_name)
  {
    const auto out = std::filesystem::temp_directory_path() / scratch_name;
    std::filesystem::remove_all(out);
    const simulator::Case c = simulator::read_case(case_file, overrides);
    simulator::RunOptions o;
    o.folder = out.string();
    o.quiet  = true;
    Run        r;
    const auto t0 = std::chrono::steady_clock::now();
    r.code        = simulator::run_solve(c, o);
    r.wall        = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    std::ifstream in(out / "summary.json");
    r.s = nlohmann::json::parse(in);
    std::filesystem::remove_all(out);
    return r;
  }
} // namespace backcomb::benchmark
