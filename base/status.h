// The outcome of one solve, as stored in summary.json and the sweep table.
#pragma once

#include <optional>
#include <string>

namespace backcomb
{
  enum class Status
  {
    converged, // every requested point converged
    partial,   // the metrics exist, but some point or post-step failed
    failed,    // no metrics: the solve could not get where they are needed
    missing    // (sweeps) a case without a result
  };

  // The one text form of each status ("converged", "partial", "failed",
  // "missing").
  std::string to_string(Status s);

  // The inverse; nothing for any other text.
  std::optional<Status> status_from_string(const std::string &text);
} // namespace backcomb
