// Shared conventions for reading case files (deal.II ParameterHandler text).
//
// Every stage declares and parses its own parameters next to the code that
// uses them (declare_parameters / parse_parameters). Semantic checks that the
// ParameterHandler patterns cannot express (strictly positive sizes,
// contradictions between entries) throw InputError naming the entry and the
// value; the case-file loader adds the file name and line.
#pragma once

#include <deal.II/base/parameter_handler.h>

#include <stdexcept>
#include <string>
#include <vector>

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
    exit_internal       = 5  // a bug: please report with the case file
  };

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

  // Helpers for parse_parameters(): `prm` must be inside the section whose
  // path is `section` (used only for messages).
  double
  get_positive(const dealii::ParameterHandler &prm,
               const std::string &section,
               const std::string &name);
  double
  get_nonnegative(const dealii::ParameterHandler &prm,
                  const std::string &section,
                  const std::string &name);
  // A finite double in [lo, hi].
  double
  get_in_range(const dealii::ParameterHandler &prm,
               const std::string &section,
               const std::string &name,
               double lo,
               double hi);

  // A whole number in [lo, hi].
  unsigned
  get_whole_number(const dealii::ParameterHandler &prm,
                   const std::string &section,
                   const std::string &name,
                   unsigned lo,
                   unsigned hi);

  // A number as the default text of a case-file entry.
  std::string
  default_text(double value);

  // Declares a double entry with a documentation string that states unit
  // and range; the pattern admits any finite number so that the semantic
  // checks above produce the error (with the entry's name and value).
  void
  declare_number(dealii::ParameterHandler &prm,
                 const std::string &name,
                 const std::string &default_value,
                 const std::string &documentation);
} // namespace backcomb
