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
  trim(const std::string &s)
  {
    const auto first = s.find_first_not_of(" \t\r\n");
    if (first == std::string::npos)
      return "";
    return s.substr(first, s.find_last_not_of(" \t\r\n") - first + 1);
  }

  std::string
  format_fixed(const double v, const int decimals)
  {
    char buffer[400];
    std::snprintf(buffer, sizeof buffer, "%.*f", decimals, v);
    return buffer;
  }
} // namespace backcomb
