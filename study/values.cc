#include "study/values.h"

#include "base/errors.h"
#include "base/format.h"

#include <algorithm>
#include <cmath>
#include <sstream>

namespace backcomb::study
{
  namespace
  {
    // A geometric range: N values from start to stop with a constant ratio
    // between neighbours, the ends kept exactly as given.
    std::vector<std::string>
    geometric_range(const std::string &entry, const std::string &item, const double start,
                    const double stop, const std::string &count_text)
    {
      const auto n = to_number(count_text);
      if (!n || *n != std::floor(*n) || *n < 2 || *n > double(max_values))
        throw InputError(entry, item, "xN needs a whole number N of values, 2 <= N <= 10000");
      if (!(start > 0 && stop > 0))
        throw InputError(entry, item, "a geometric range needs start > 0 and stop > 0");
      const long               count = long(*n);
      std::vector<std::string> values;
      for (long i = 0; i < count; ++i)
        {
          const double v = i == 0           ? start
                           : i == count - 1 ? stop
                                            : start * std::pow(stop / start, double(i) / (count - 1));
          values.push_back(format_number(v, 6));
        }
      return values;
    }

    // A linear range: start, start + step, ... up to stop.
    std::vector<std::string>
    linear_range(const std::string &entry, const std::string &item, const double start,
                 const double stop, const std::string &step_text)
    {
      const auto step = to_number(step_text);
      if (!step || *step == 0)
        throw InputError(entry, item, "the step of a range must be a non-zero number");
      if ((stop - start) * *step < 0)
        throw InputError(entry, item, "the step points away from stop: use a negative step to count down");
      const double steps = (stop - start) / *step;
      if (steps + 1 > double(max_values))
        throw InputError(entry, item, "gives more than 10000 values");
      // The tolerance keeps stop when rounding puts it a hair beyond it.
      const long               count = long(std::floor(steps + 1e-9)) + 1;
      std::vector<std::string> values;
      for (long i = 0; i < count; ++i)
        {
          double v = start + i * *step;
          if (std::abs(v) < 1e-12 * std::abs(*step))
            v = 0; // 0.1 - 0.1 style residue
          values.push_back(format_number(v, 12));
        }
      return values;
    }

    // Expands one "start:stop:step" or "start:stop:xN" item.
    std::vector<std::string>
    expand_range(const std::string &entry, const std::string &item)
    {
      const auto parts = split(item, ':');
      if (parts.size() != 3)
        throw InputError(entry, item, "a range is start:stop:step or start:stop:xN");
      const auto start = to_number(parts[0]), stop = to_number(parts[1]);
      if (!start || !stop)
        throw InputError(entry, item, "the start and stop of a range must be numbers");
      const std::string third = trim(parts[2]);
      if (!third.empty() && (third[0] == 'x' || third[0] == 'X'))
        return geometric_range(entry, item, *start, *stop, third.substr(1));
      return linear_range(entry, item, *start, *stop, third);
    }
  } // namespace

  std::vector<std::string>
  split(const std::string &text, const char separator)
  {
    std::vector<std::string> parts;
    std::string              part;
    std::istringstream       in(text);
    while (std::getline(in, part, separator))
      parts.push_back(part);
    if (!text.empty() && text.back() == separator)
      parts.emplace_back();
    return parts;
  }

  std::optional<double>
  to_number(const std::string &text)
  {
    const std::string t = trim(text);
    if (t.empty())
      return std::nullopt;
    char        *end = nullptr;
    const double v   = std::strtod(t.c_str(), &end);
    if (end != t.c_str() + t.size() || !std::isfinite(v))
      return std::nullopt;
    return v;
  }

  bool
  all_numeric(const std::vector<std::string> &values)
  {
    return std::all_of(values.begin(), values.end(),
                       [](const std::string &v) { return to_number(v).has_value(); });
  }

  std::string
  with_unit(const std::string &value, const std::string &unit)
  {
    return unit.empty() ? value : value + " " + unit;
  }

  std::string
  last_component(const std::string &path)
  {
    return path.substr(path.rfind('/') + 1);
  }

  std::vector<std::string>
  expand_values(const std::string &entry, const std::string &list)
  {
    if (trim(list).empty())
      throw InputError(entry, list, "the value list is empty");
    std::vector<std::string> values;
    for (const auto &raw : split(list, ','))
      {
        const std::string item = trim(raw);
        if (item.empty())
          throw InputError(entry, list, "empty item in the comma-separated value list");
        if (item.find(':') != std::string::npos)
          {
            const auto range = expand_range(entry, item);
            values.insert(values.end(), range.begin(), range.end());
          }
        else
          values.push_back(item);
        if (values.size() > max_values)
          throw InputError(entry, list, "more than 10000 values");
      }
    // The same value twice would make two cases with one result; 5 and 5.0
    // are the same value.
    for (std::size_t i = 0; i < values.size(); ++i)
      for (std::size_t j = 0; j < i; ++j)
        {
          const auto a = to_number(values[i]), b = to_number(values[j]);
          if (values[i] == values[j] || (a && b && *a == *b))
            throw InputError(entry, values[i], "appears twice in the value list");
        }
    return values;
  }

  StudyEntry
  parse_vary(const std::string &text, const std::string &option)
  {
    const auto eq = text.find('=');
    if (eq == std::string::npos)
      throw InputError(option, text, "expected \"Section/Name=values\"");
    const std::string path = trim(text.substr(0, eq));
    if (path.empty() || path.find('/') == std::string::npos || path.front() == '/' || path.back() == '/')
      throw InputError(option, text, "expected \"Section/Name=values\"");
    StudyEntry e;
    e.path   = path;
    e.values = expand_values(path, text.substr(eq + 1));
    return e;
  }
} // namespace backcomb::study
