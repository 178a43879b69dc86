// The value syntax of `--vary "Section/Name=LIST"`: lists, linear and
// geometric ranges, and the small text helpers the rest of the study uses
// to read values back as numbers.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // At most this many values per varied entry.
  constexpr std::size_t max_values = 10000;

  // One varied entry: its case-file path and its values as text.
  struct StudyEntry
  {
    std::string              path;   // "Geometry/Gap"
    std::vector<std::string> values; // "5", "10", ...
    std::string              unit;   // entry_unit(path); "" if dimensionless or unknown
    // "" for a --vary entry (an axis of the grid); for an --in-step entry
    // the path of the --vary entry it moves with: its i-th value goes with
    // that entry's i-th value, so it adds no cases.
    std::string in_step_with = {};

    bool is_axis() const { return in_step_with.empty(); }
  };

  // Expands the value list of a --vary argument. The list is
  // comma-separated; each item is
  //   a value            5   or   substrate   (any text without ':' or ',')
  //   a linear range     start:stop:step      start, start+step, ... up to
  //                                           stop (inclusive within 1e-9
  //                                           of a step); step may be
  //                                           negative when stop < start
  //   a geometric range  start:stop:xN        N values from start to stop
  //                                           (both > 0, N >= 2) with a
  //                                           constant ratio, rounded to 6
  //                                           significant digits
  // Values keep the order given. Empty items, malformed ranges, more than
  // 10000 values and a value given twice throw InputError naming `entry`.
  std::vector<std::string> expand_values(const std::string &entry, const std::string &list);

  // Parses one --vary (or --in-step, named by `option`) argument
  // "Section/Name=LIST" (entry not yet checked against the case file;
  // make_plan does that). The unit stays empty.
  StudyEntry parse_vary(const std::string &text, const std::string &option = "--vary");

  // The parts of `text` between separators; a trailing separator gives a
  // trailing empty part ("5," -> "5", "").
  std::vector<std::string> split(const std::string &text, char separator);

  // The whole text as one finite number, or nothing.
  std::optional<double> to_number(const std::string &text);

  // True when every value reads as a number (a plot axis is possible).
  bool all_numeric(const std::vector<std::string> &values);

  // "5 um", or "5" for a dimensionless entry.
  std::string with_unit(const std::string &value, const std::string &unit);

  // "Gap" of "Geometry/Gap".
  std::string last_component(const std::string &path);
} // namespace backcomb::study
