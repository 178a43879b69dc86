// Where things lie in a study folder (FOLDER = --out), and reading the JSON
// files found there.
//
//   FOLDER/sweep-plan.json       the grid: case ids and their overrides
//   FOLDER/cases/<id>/           one `solve` folder per case, plus solve.log;
//                                summary.json marks a finished case,
//                                failed.json a case that stopped with an error
//   FOLDER/sweep.csv, sweep.json the merged table and the recommendation
//   FOLDER/sweep.svg, sweep.png  PCE and collection efficiency vs. the
//                                first varied entry
//   FOLDER/sweep-fields_V<bias>.pvd  ParaView collection of the cases'
//                                fields, indexed by the first varied value
#pragma once

#include <nlohmann/json.hpp>

#include <string>

namespace backcomb::study
{
  std::string plan_file(const std::string &folder);

  // FOLDER/cases/<id>.
  std::string case_folder(const std::string &folder, const std::string &case_id);

  // A case is finished when its folder holds summary.json (the solve got
  // that far, whatever its status) or failed.json (it stopped earlier).
  bool is_finished(const std::string &folder, const std::string &case_id);

  // The parsed file; InputError naming the file when it cannot be opened or
  // is not JSON.
  nlohmann::json read_json(const std::string &file);

  // The first line of `text`, cut to `max_length` characters with "...".
  std::string first_line(const std::string &text, std::size_t max_length = 300);
} // namespace backcomb::study
