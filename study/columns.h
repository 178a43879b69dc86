// The one table of a study's columns. Each numeric quantity of a case is
// described once, by a Column: its header in sweep.csv, its place in
// sweep.json, its unit, the StudyRow field that holds it, where a case's
// summary.json has it, and whether and how the screen table shows it. The
// CSV, the JSON, the screen table and the reading of a case's results all
// walk this table, so a quantity cannot be in one of them and missing, or
// in another order, in the others.
//
// Around the numeric columns every output has the same fixed frame: the
// case id and the varied entries' values first, the status (and, in the
// files, the first failure reason) last.
#pragma once

#include "base/status.h"
#include "study/plan.h"

#include <nlohmann/json.hpp>

#include <map>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // One row of the merged table: one case.
  struct StudyRow
  {
    std::string              id;
    std::vector<std::string> values; // one per varied entry
    // The sample of the uncertain entries (StudyCase::sample), if any.
    std::optional<std::size_t> sample;
    Status                   status = Status::missing;
    std::string              reason; // first failure diagnostic ("" if none)
    // The case folder holds a summary.json of another case, case text or
    // program version (its fingerprint differs): a sweep recomputes it.
    bool                     foreign = false;
    // The quantities of the column table (columns()), nothing where a case
    // did not produce them. Whole numbers (Newton iterations, step
    // halvings) are held as doubles too, exactly.
    std::optional<double> pitch_um, footprint_width_um, active_width_um, collection_efficiency, Jsc, Voc, FF,
      PCE, Jsc_active, PCE_active, dead_zone_fraction, hysteresis_index;
    // Power lost at the maximum power point, mW/cm^2 of footprint
    // (summary.json losses): recombination (bulk, surfaces, minority
    // carriers at the combs), Joule heat in the film, majority carriers
    // crossing the combs.
    std::optional<double> loss_recombination, loss_film_joule, loss_contacts;
    // The whole comb cell (Electrodes section): fingers plus contact
    // resistance at its maximum power point, its PCE per footprint, and
    // the series resistance from suns-Voc (ohm cm^2).
    std::optional<double> loss_electrodes, PCE_cell, series_resistance;
    std::optional<double> newton_iterations, step_halvings, seconds;
    // summary.json "bounds" (simulator/bounds.h): results outside a
    // physical bound, and all warnings (bounds and mesh guard rails).
    std::optional<double> bound_violations, warnings;
    // The gap between the fingers (from the plan, not a column: it is the
    // varied entry or a fixed one), for the fabrication limits.
    std::optional<double> gap_um;
    // Power lost at the maximum power point per mechanism, mW/cm^2 of
    // footprint, keyed by LossPart::key (summary.json "losses"; only the
    // parts the case has): what the recommendation compares between gaps.
    std::map<std::string, double> loss_parts;
  };

  // A mechanism of loss in StudyRow::loss_parts: its key (also in
  // sweep.json) and its name in the recommendation's sentence.
  struct LossPart
  {
    std::string key, words;
  };

  // Every LossPart, in the order the recommendation lists them.
  const std::vector<LossPart> &loss_parts();

  struct Column
  {
    std::string              csv_header; // "Jsc_mA_per_cm2"; "" if not in sweep.csv
    std::vector<std::string> json_path;  // keys in a case of sweep.json
    std::string              unit;       // "mA/cm^2"; "" if dimensionless
    std::optional<double> StudyRow::*field = nullptr;
    // Where summary.json holds the value (nested keys); empty when the
    // value comes from elsewhere (the plan) or from `summary_reader`.
    std::vector<std::string> summary_path;
    // For a value that summary.json holds in pieces (a sum of two terms).
    std::optional<double> (*summary_reader)(const nlohmann::json &summary) = nullptr;
    // A metric exists only for a case that did not fail, whatever its
    // summary.json holds; other values (sizes, iteration counts, time) are
    // read from a failed case too.
    bool metric = true;
    bool whole  = false; // a count: printed without decimals
    // The screen table: header, decimals, and 1-based position among the
    // numeric columns shown (0: not shown).
    std::string screen_header;
    int         screen_decimals = 0;
    int         screen_position = 0;

    // Setters for building the table.
    Column &json_at(std::vector<std::string> path) { return json_path = std::move(path), *this; }
    Column &read(std::vector<std::string> path) { return summary_path = std::move(path), *this; }
    Column &read(std::optional<double> (*reader)(const nlohmann::json &)) { return summary_reader = reader, *this; }
    Column &not_metric() { return metric = false, *this; }
    Column &count() { return whole = true, *this; }
    Column &show(std::string header, int decimals, int position)
    {
      screen_header = std::move(header), screen_decimals = decimals, screen_position = position;
      return *this;
    }

    // The value in a case's summary.json, or nothing.
    std::optional<double> from_summary(const nlohmann::json &summary) const;
    // The value as text in sweep.csv ("" when absent), in sweep.json (null
    // when absent) and on screen ("-" when absent).
    std::string    csv_text(const StudyRow &row) const;
    nlohmann::json json_value(const StudyRow &row) const;
    std::string    screen_text(const StudyRow &row) const;
  };

  // The numeric columns in the order of sweep.csv.
  const std::vector<Column> &columns();

  // The numeric columns shown on screen, in their screen order.
  std::vector<const Column *> screen_columns();

  // Headers of a varied entry: "Geometry/Gap [um]" in sweep.csv, "Gap (um)"
  // on screen.
  std::string entry_csv_header(const StudyEntry &e);
  std::string entry_screen_header(const StudyEntry &e);

  // The number at the nested keys `path` of `j`, or nothing.
  std::optional<double> number_at(const nlohmann::json &j, const std::vector<std::string> &path);

  // Fills `row` from a case's summary.json: status, first failure, and every
  // column that summary.json holds.
  void read_summary(const nlohmann::json &summary, StudyRow &row);
} // namespace backcomb::study
