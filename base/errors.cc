#include "base/errors.h"

#include "base/text.h"

namespace backcomb
{
  // Messages carry file names and values as the user gave them; bytes that
  // are not UTF-8 are written as \xNN, so that a message can always go into
  // a JSON file (failed.json of a sweep case) and names the byte.
  InputError::InputError(const std::string &entry,
                         const std::string &value,
                         const std::string &reason)
    : std::runtime_error(escape_invalid_utf8(entry + " = " + value + ": " + reason))
    , entry_(entry)
    , value_(value)
    , reason_(reason)
  {}

  InputError::InputError(const std::string &message)
    : std::runtime_error(escape_invalid_utf8(message))
    , reason_(message)
  {}

  OutputError::OutputError(const std::string &message)
    : std::runtime_error(escape_invalid_utf8(message))
  {}
} // namespace backcomb
