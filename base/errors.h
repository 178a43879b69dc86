// Errors and exit codes shared by every layer. An InputError is the user's
// to fix (it names the entry or file and the value); an OutputError means a
// result could not be written; anything else that escapes is a bug.
#pragma once

#include <stdexcept>
#include <string>

namespace backcomb
{
  // Process exit codes, documented in README.md ("Exit codes").
  enum ExitCode : int
  {
    exit_ok             = 0,
    exit_usage          = 1, // wrong command line
    exit_input          = 2, // invalid case file, override or data file
    exit_no_convergence = 3, // a solve failed after all step halvings
    exit_io             = 4, // output could not be written
    exit_internal       = 5, // a bug: please report with the case file
    exit_bounds         = 6  // finished, but a result breaks a physical bound
  };

  // Messages of both error classes have bytes that are not UTF-8 written
  // as \\xNN (base/text.h), so that they can be stored in JSON.
  //
  // An invalid input value. `entry` is the full path "Section/Name" (or a
  // file name for data files), `value` the offending text.
  class InputError : public std::runtime_error
  {
  public:
    InputError(const std::string &entry,
               const std::string &value,
               const std::string &reason);
    // For errors that are not about a single entry (e.g. unreadable file).
    explicit InputError(const std::string &message);

    const std::string &entry() const { return entry_; }
    const std::string &value() const { return value_; }
    const std::string &reason() const { return reason_; }

  private:
    std::string entry_, value_, reason_;
  };

  // A result could not be written (exit code 4).
  class OutputError : public std::runtime_error
  {
  public:
    explicit OutputError(const std::string &message);
  };
} // namespace backcomb
