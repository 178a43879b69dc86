// The one place where numbers become text for result files, file names and
// screen tables, so that a value reads the same everywhere.
#pragma once

#include <string>

namespace backcomb
{
  // `v` with `significant` significant digits in the shortest of fixed and
  // exponential notation (printf "%.*g"); 10 digits keeps a double's value
  // to well below any figure the results quote. Non-finite values print as
  // "nan", "inf", "-inf".
  std::string format_number(double v, int significant = 10);

  // `v` with exactly `decimals` digits after the point ("0.6200"): biases in
  // file names and labels, where fixed width sorts and reads well.
  std::string format_fixed(double v, int decimals);

  // `s` without leading and trailing blanks, tabs and line ends (the text
  // of a value in a case file, a table cell, a --vary item).
  std::string trim(const std::string &s);
} // namespace backcomb
