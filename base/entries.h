// Shared conventions for reading case files (deal.II ParameterHandler text).
//
// Every stage declares and parses its own parameters next to the code that
// uses them (declare_parameters / parse_parameters). Semantic checks that the
// ParameterHandler patterns cannot express (strictly positive sizes,
// contradictions between entries) throw InputError naming the entry and the
// value; the case-file loader adds the file name and line.
#pragma once

#include "base/errors.h"

#include <deal.II/base/parameter_handler.h>

#include <cmath>
#include <string>
#include <vector>

namespace backcomb
{
  // A number as the default text of a case-file entry (6 significant
  // digits, base/format.h).
  std::string
  default_text(double value);

  // ----- Entries declared once ------------------------------------------
  //
  // A numeric case-file entry is described once, by a NumberEntry: its name,
  // unit, allowed range and meaning. declare() writes the documentation from
  // that description ("... Unit: eV. Allowed: 0 < value <= 10."), so the
  // documented range is by construction the range that get() checks, and
  // records the unit under the entry's full path for `template` and the
  // sweep table headers (entry_unit()).
  struct Range
  {
    double lo = -1e300, hi = 1e300;
    bool   lo_open = false, hi_open = false; // open: the bound itself is excluded
    bool   whole   = false;                  // whole numbers only

    static Range closed(double lo, double hi) { return {lo, hi, false, false, false}; }
    static Range above(double lo, double hi) { return {lo, hi, true, false, false}; }  // lo < v <= hi
    static Range open(double lo, double hi) { return {lo, hi, true, true, false}; }    // lo < v < hi
    static Range whole_numbers(double lo, double hi) { return {lo, hi, false, false, true}; }
    // No upper bound (the number must still be finite): v > lo, v >= lo.
    static Range greater_than(double lo) { return {lo, HUGE_VAL, true, false, false}; }
    static Range at_least(double lo) { return {lo, HUGE_VAL, false, false, false}; }

    bool        contains(double v) const;
    std::string text() const; // "0 < value <= 10", "value >= 0"
  };

  struct NumberEntry
  {
    std::string name;          // "Band gap"
    double      default_value; // in `unit`
    std::string unit;          // "eV", "cm^-3", ...; "" if dimensionless
    Range       range;
    std::string documentation; // what it means; unit and range are appended
  };

  // Declares `e` inside the current subsection of `prm`, whose path is
  // `section` ("Absorber/Bands"); the default may be overridden (the same
  // description serves several sections with different defaults).
  void declare(dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e);
  void declare(dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e,
               double default_value);

  // The checked value of `e`; InputError "section/name = text: must satisfy
  // <range> (unit)" otherwise.
  double get(const dealii::ParameterHandler &prm, const std::string &section, const NumberEntry &e);

  // A comma-separated list of numbers in one unit, each in `item_range`,
  // at most `max_items` of them; the empty text is the empty list.
  struct NumberListEntry
  {
    std::string name;
    std::string default_text; // "0, 0.5"
    std::string unit;
    Range       item_range;
    unsigned    max_items;
    std::string documentation;
  };

  void declare(dealii::ParameterHandler &prm, const std::string &section, const NumberListEntry &e);

  // The checked list; InputError naming the entry and its text otherwise.
  std::vector<double> get(const dealii::ParameterHandler &prm, const std::string &section,
                          const NumberListEntry &e);

  // A non-numeric entry (selection, flag, list, file name): declared with its
  // pattern, and its unit recorded (e.g. "V" for a list of biases).
  void declare_text(dealii::ParameterHandler     &prm,
                    const std::string            &section,
                    const std::string            &name,
                    const std::string            &default_value,
                    const dealii::Patterns::PatternBase &pattern,
                    const std::string            &unit,
                    const std::string            &documentation);

  // The unit recorded for the entry at `path` ("Geometry/Gap" -> "um"); ""
  // for a dimensionless or unknown entry.
  std::string entry_unit(const std::string &path);
} // namespace backcomb
