#include "input.h"

#include <cerrno>
#include <cmath>
#include <cstdlib>
#include <sstream>

namespace backcomb
{
  InputError::InputError(const std::string &entry,
                         const std::string &value,
                         const std::string &reason)
    : std::runtime_error(entry + " = " + value + ": " + reason)
    , entry_(entry)
    , value_(value)
    , reason_(reason)
  {}

  InputError::InputError(const std::string &message)
    : std::runtime_error(message)
    , reason_(message)
  {}

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

  double
  get_positive(const dealii::ParameterHandler &prm,
               const std::string &section,
               const std::string &name)
  {
    const double v = get_finite(prm, section, name);
    if (!(v > 0))
      throw InputError(section + "/" + name, prm.get(name), "must be > 0");
    return v;
  }

  double
  get_nonnegative(const dealii::ParameterHandler &prm,
                  const std::string &section,
                  const std::string &name)
  {
    const double v = get_finite(prm, section, name);
    if (!(v >= 0))
      throw InputError(section + "/" + name, prm.get(name), "must be >= 0");
    return v;
  }

  double
  get_in_range(const dealii::ParameterHandler &prm,
               const std::string &section,
               const std::string &name,
               const double lo,
               const double hi)
  {
    const double v = get_finite(prm, section, name);
    if (!(v >= lo && v <= hi))
      {
        std::ostringstream r;
        r << "must lie in [" << lo << ", " << hi << "]";
        throw InputError(section + "/" + name, prm.get(name), r.str());
      }
    return v;
  }

  void
  declare_number(dealii::ParameterHandler &prm,
                 const std::string &name,
                 const std::string &default_value,
                 const std::string &documentation)
  {
    // Patterns::Anything: the range and number checks happen in
    // get_positive() & co., which name the entry and the value.
    prm.declare_entry(name,
                      default_value,
                      dealii::Patterns::Anything(),
                      documentation);
  }
} // namespace backcomb

namespace backcomb
{
  unsigned
  get_whole_number(const dealii::ParameterHandler &prm,
                   const std::string &section,
                   const std::string &name,
                   const unsigned lo,
                   const unsigned hi)
  {
    const double v = get_in_range(prm, section, name, lo, hi);
    if (v != std::floor(v))
      throw InputError(section + "/" + name, prm.get(name), "must be a whole number");
    return static_cast<unsigned>(v);
  }
} // namespace backcomb

namespace backcomb
{
  std::string
  default_text(const double value)
  {
    std::ostringstream s;
    s << value;
    return s.str();
  }
} // namespace backcomb
