#include "base/status.h"

namespace backcomb
{
  std::string
  to_string(const Status s)
  {
    switch (s)
      {
        case Status::converged:
          return "converged";
        case Status::partial:
          return "partial";
        case Status::failed:
          return "failed";
        case Status::missing:
          return "missing";
      }
    return "missing";
  }

  std::optional<Status>
  status_from_string(const std::string &text)
  {
    for (const Status s : {Status::converged, Status::partial, Status::failed, Status::missing})
      if (to_string(s) == text)
        return s;
    return std::nullopt;
  }
} // namespace backcomb
