#include "base/format.h"

#include <cstdio>

namespace backcomb
{
  std::string
  format_number(const double v, const int significant)
  {
    char buffer[64];
    std::snprintf(buffer, sizeof buffer, "%.*g", significant, v);
    return buffer;
  }

  std::string
  format_fixed(const double v, const int decimals)
  {
    char buffer[400];
    std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
    return buffer;
  }
} // namespace backcomb
