#include "base/errors.h"

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
} // namespace backcomb
