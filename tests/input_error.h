// The message of the InputError a callable throws, for tests that check
// what an input error says.
#pragma once

#include "base/errors.h"

#include <gtest/gtest.h>

#include <string>

namespace backcomb::test_support
{
  // Runs `f`, expects an InputError and returns its message ("" and a
  // test failure if none is thrown).
  template <typename F>
  std::string
  input_error_message(F f)
  {
    try
      {
        f();
      }
    catch (const InputError &e)
      {
        return e.what();
      }
    ADD_FAILURE() << "no InputError thrown";
    return "";
  }
} // namespace backcomb::test_support
