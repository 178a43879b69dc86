// Writing result files: every file goes to a temporary name in the target
// folder and is renamed into place, so a reader (or a killed run) sees
// either the previous complete file or the new complete file.
#pragma once

#include "base/errors.h"

#include <string>

namespace backcomb
{
  // Creates `folder` (and parents) or throws OutputError naming it.
  void make_folder(const std::string &folder);

  // Writes `text` to `path` atomically; OutputError on failure.
  void write_file_atomically(const std::string &path, const std::string &text);
} // namespace backcomb
