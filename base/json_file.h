// A JSON result file written atomically. Text that is not UTF-8 (a file
// name or an overridden value carried into the file) is written with
// replacement characters instead of throwing, so that no finished
// computation is lost to an encoding error.
#pragma once

#include "base/files.h"

#include <nlohmann/json.hpp>

#include <string>

namespace backcomb
{
  inline void
  write_json_atomically(const std::string &path, const nlohmann::json &j)
  {
    write_file_atomically(path, j.dump(2, ' ', false, nlohmann::json::error_handler_t::replace) + "\n");
  }
} // namespace backcomb
