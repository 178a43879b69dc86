#include "base/entries.h"

#include "base/format.h"

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <map>
#include <sstream>

namespace backcomb
{
  namespace
  {
    double
    get_finite(const dealii::ParameterHandler &prm,
               const std::string &section,
               const std::string &name)
    {
      const std::string text = prm.get(name);
      const std::string path = section.empty() ? name : section + "/" + name;
      // strtod consumes the whole text (surrounding blanks allowed) and
      // reports overflow, which stream extraction hides.
      const char *begin = text.c_str();
      char       *end   = nullptr;
      errno             = 0;
      const double v    = std::strtod(begin, &end);
      if (end == begin)
        throw InputError(path, text, "not a number");
      while (*end == ' ' || *end == '\t')
        ++end;
      if (*end != '\0')
        throw InputError(path, text, "not a number (unexpected text after the number)");
      if (!std::isfinite(v) || errno == ERANGE)
        throw InputError(path, text, "must be a finite number of normal size");
      return v;
    }
  } // namespace

} // namespace backcomb

namespace backcomb
{
  std::string
  default_text(const double value)
  {
    return format_number(value, 6);
  }
} // namespace backcomb

namespace backcomb
{
  namespace
  {
    std::map<std::string, std::string> &
    unit_registry()
    {
      static std::map<std::string, std::string> units;
      return units;
    }

    std::string
    full_path(const std::string &section, const std::string &name)
    {
      return section.empty() ? name : section + "/" + name;
    }
  } // namespace

  bool
  Range::contains(const double v) const
  {
    if (whole && v != std::floor(v))
      return false;
    const bool above_lo = lo_open ? v > lo : v >= lo;
    const bool below_hi = hi_open ? v < hi : v <= hi;
    return above_lo && below_hi;
  }

  std::string
  Range::text() const
  {
    std::ostringstream s;
    if (std::isinf(hi))
      s << "value" << (lo_open ? " > " : " >= ") << default_text(lo);
    else
      s << default_text(lo) << (lo_open ? " < " : " <= ") << "value" << (hi_open ? " < " : " <= ")
        << default_text(hi);
    if (whole)
      s << ", a whole number";
    return s.str();
  }

  void
  declare(dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e)
  {
    declare(prm, section, e, e.default_value);
  }

  void
  declare(dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e,
          const double default_value)
  {
    std::string doc = e.documentation;
    if (!doc.empty() && doc.back() != '.')
      doc += '.';
    doc += (e.unit.empty() ? std::string(" Dimensionless.") : " Unit: " + e.unit + ".") +
           " Allowed: " + e.range.text() + ".";
    prm.declare_entry(e.name, default_text(default_value), dealii::Patterns::Anything(), doc);
    unit_registry()[full_path(section, e.name)] = e.unit;
  }

  double
  get(const dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e)
  {
    const double v = get_finite(prm, section, e.name);
    if (!e.range.contains(v))
      throw InputError(full_path(section, e.name), prm.get(e.name),
                       "must satisfy " + e.range.text() + (e.unit.empty() ? "" : " (" + e.unit + ")"));
    return v;
  }

  void
  declare(dealii::ParameterHandler &prm, const std::string &section, const NumberListEntry &e)
  {
    std::string doc = e.documentation;
    if (!doc.empty() && doc.back() != '.')
      doc += '.';
    doc += " A comma-separated list of at most " + std::to_string(e.max_items) +
           " numbers; empty: none." +
           (e.unit.empty() ? std::string(" Dimensionless.") : " Unit: " + e.unit + ".") +
           " Allowed for each: " + e.item_range.text() + ".";
    prm.declare_entry(e.name, e.default_text, dealii::Patterns::Anything(), doc);
    unit_registry()[full_path(section, e.name)] = e.unit;
  }

  std::vector<double>
  get(const dealii::ParameterHandler &prm, const std::string &section, const NumberListEntry &e)
  {
    const std::string path = full_path(section, e.name);
    const std::string text = prm.get(e.name);
    std::vector<double> out;
    if (text.find_first_not_of(" \t") == std::string::npos)
      return out;
    std::stringstream in(text);
    for (std::string item; std::getline(in, item, ',');)
      {
        // The same number reading as for a single entry: the whole item,
        // finite and of normal size.
        const char *begin = item.c_str();
        char       *end   = nullptr;
        errno             = 0;
        const double v    = std::strtod(begin, &end);
        while (end != begin && (*end == ' ' || *end == '\t'))
          ++end;
        if (end == begin || *end != '\0' || !std::isfinite(v) || errno == ERANGE)
          throw InputError(path, text, "expected a comma-separated list of numbers");
        if (!e.item_range.contains(v))
          throw InputError(path, text,
                           "every item must satisfy " + e.item_range.text() +
                             (e.unit.empty() ? "" : " (" + e.unit + ")"));
        out.push_back(v);
      }
    if (out.size() > e.max_items)
      throw InputError(path, text, "at most " + std::to_string(e.max_items) + " items");
    return out;
  }

  void
  declare_text(dealii::ParameterHandler            &prm,
               const std::string                   &section,
               const std::string                   &name,
               const std::string                   &default_value,
               const dealii::Patterns::PatternBase &pattern,
               const std::string                   &unit,
               const std::string                   &documentation)
  {
    prm.declare_entry(name, default_value, pattern,
                      documentation + (unit.empty() ? "" : " Unit: " + unit + "."));
    unit_registry()[full_path(section, name)] = unit;
  }

  std::string
  entry_unit(const std::string &path)
  {
    const auto it = unit_registry().find(path);
    return it == unit_registry().end() ? std::string() : it->second;
  }
} // namespace backcomb
