// Parameter sweeps: value lists, the grid, the recommendation, and whole
// sweeps of a tiny fast case (resume, array-task shares plus merge, a
// failing case). The MPI run is checked by tests/sweep_cli.sh.
#include "base/entries.h"
#include "base/format.h"
#include "base/status.h"
#include "study/study.h"

#include <deal.II/base/parameter_handler.h>

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>
#include <unistd.h>

using namespace backcomb;

using namespace backcomb::study;
namespace fs = std::filesystem;

namespace
{
  fs::path
  fresh_folder(const std::string &name)
  {
    const fs::path p = fs::temp_directory_path() / ("backcomb-sweep-" + name + "-" + std::to_string(::getpid()));
    fs::remove_all(p);
    fs::create_directories(p);
    return p;
  }

  std::string
  read_file(const fs::path &p)
  {
    std::ifstream      in(p);
    std::ostringstream s;
    s << in.rdbuf();
    return s.str();
  }

  std::string
  write_case(const fs::path &folder, const std::string &text)
  {
    const fs::path f = folder / "case.prm";
    std::ofstream(f) << text;
    return f.string();
  }

  // A tiny, fast case (well under a second per solve), shared with
  // sweep_cli.sh: a lit test strip between an electron- and a
  // hole-selective end contact, coarse mesh, short J-V, no dark sweep, no
  // fields. Lifetimes far above the transit time: every generated pair is
  // collected.
  const std::string tiny_strip_file = BACKCOMB_TEST_SOURCE_DIR "/sweep_tiny.prm";

  // A comb period, only read (never solved) by the grid tests.
  const char *const comb = R"(
subsection Geometry
  set Electron finger width = 4
  set Hole finger width = 6
  set Gap = 20
end
)";

  std::vector<std::string>
  values(const std::string &list)
  {
    return expand_values("Geometry/Gap", list);
  }

  // The data rows of a sweep.csv (comment lines dropped).
  std::vector<std::string>
  csv_rows(const fs::path &file)
  {
    std::vector<std::string> rows;
    std::istringstream       in(read_file(file));
    for (std::string line; std::getline(in, line);)
      if (!line.empty() && line[0] != '#')
        rows.push_back(line);
    return rows;
  }

  // Records the unit of Geometry/Gap the way every entry will be declared
  // (base/entries.h declare()), in a ParameterHandler of the test's own:
  // the study reads units from entry_unit(), never from documentation text.
  void
  declare_gap_with_new_api()
  {
    dealii::ParameterHandler prm;
    prm.enter_subsection("Geometry");
    declare(prm, "Geometry",
            NumberEntry{"Gap", 20, "um", Range::above(0, 1e4), "Distance between neighbouring fingers"});
    prm.leave_subsection();
  }

  std::map<std::string, nlohmann::json>
  cases_by_id(const fs::path &sweep_json)
  {
    std::ifstream                         in(sweep_json);
    const nlohmann::json                  j = nlohmann::json::parse(in);
    std::map<std::string, nlohmann::json> out;
    for (const auto &c : j["cases"])
      out[c["id"]] = c;
    return out;
  }
} // namespace

// Lists keep their order and text; ranges expand as documented (analytic).
TEST(SweepValues, ListsAndRanges)
{
  EXPECT_EQ(values("5,10, 20 ,50"), (std::vector<std::string>{"5", "10", "20", "50"}));
  EXPECT_EQ(values("10:50:10"), (std::vector<std::string>{"10", "20", "30", "40", "50"}));
  // 0.1 is not exact in binary: the stop value is still included, and the
  // values print as the decimals the user meant.
  EXPECT_EQ(values("0:0.3:0.1"), (std::vector<std::string>{"0", "0.1", "0.2", "0.3"}));
  EXPECT_EQ(values("5:1:-2"), (std::vector<std::string>{"5", "3", "1"}));
  // A step that does not divide the span stops before `stop`.
  EXPECT_EQ(values("1:10:4"), (std::vector<std::string>{"1", "5", "9"}));
  // Geometric: constant ratio 10 between 1 and 100 (analytic).
  EXPECT_EQ(values("1:100:x3"), (std::vector<std::string>{"1", "10", "100"}));
  // 5..200 in 6 values: ratio 40^(1/5) = 2.091279 (analytic), 6 digits.
  EXPECT_EQ(values("5:200:x6"),
            (std::vector<std::string>{"5", "10.4564", "21.8672", "45.7305", "95.6352", "200"}));
  EXPECT_EQ(values("2, 10:30:10, 100"), (std::vector<std::string>{"2", "10", "20", "30", "100"}));
  // Text values (selections) pass through; read_case checks them later.
  EXPECT_EQ(expand_values("Illumination/Illuminated side", "film,substrate"),
            (std::vector<std::string>{"film", "substrate"}));
}

TEST(SweepValues, MalformedListsAreInputErrors)
{
  for (const std::string bad : {"", " ", "5,,10", "5,", "1:2", "1:2:3:4", "a:5:1", "1:5:0", "1:5:-1",
                                "5:1:1", "1:100:x1", "1:100:x2.5", "0:100:x3", "-1:100:x3", "5,5.0",
                                "10,5:15:5", "0:1:1e-6"})
    EXPECT_THROW(values(bad), InputError) << "list '" << bad << "'";
  EXPECT_THROW(parse_vary("Geometry/Gap"), InputError);
  EXPECT_THROW(parse_vary("Gap=5"), InputError);
  EXPECT_THROW(parse_vary("=5"), InputError);
  const StudyEntry e = parse_vary("Geometry/Gap=5,10");
  EXPECT_EQ(e.path, "Geometry/Gap");
  EXPECT_EQ(e.values.size(), 2u);
}

// Two --vary entries make the cartesian product, the first entry varying
// fastest; each case carries the common --set plus its own values; the
// pitch is w_e + w_h + 2 g (definition).
TEST(SweepPlan, GridIsTheCartesianProduct)
{
  const fs::path dir  = fresh_folder("grid");
  const auto     file = write_case(dir, comb);
  declare_gap_with_new_api();
  const StudyPlan plan =
    make_plan(file, {"Geometry/Absorber thickness=0.5"},
              {"Geometry/Gap=5,10,20", "Geometry/Electron finger width=2,4"});
  ASSERT_EQ(plan.cases.size(), 6u);
  EXPECT_EQ(plan.entries[0].unit, "um");
  EXPECT_EQ(plan.cases[0].id, "Gap=5__Electron_finger_width=2");
  EXPECT_EQ(plan.cases[1].id, "Gap=10__Electron_finger_width=2");
  EXPECT_EQ(plan.cases[3].id, "Gap=5__Electron_finger_width=4");
  EXPECT_EQ(plan.cases[5].overrides,
            (std::vector<std::string>{"Geometry/Absorber thickness=0.5", "Geometry/Gap=20",
                                      "Geometry/Electron finger width=4"}));
  EXPECT_DOUBLE_EQ(plan.cases[5].pitch_um, 4 + 6 + 2 * 20.0);
  EXPECT_DOUBLE_EQ(plan.cases[0].pitch_um, 2 + 6 + 2 * 5.0);
  // Same names in two sections: the ids use the full path.
  const StudyPlan both = make_plan(file, {}, {"Electron contact/Work function=4.0,4.1",
                                              "Hole contact/Work function=5.3"});
  EXPECT_EQ(both.cases[1].id, "Electron_contact_Work_function=4.1__Hole_contact_Work_function=5.3");
  // Units come from the entries' declarations (entry_unit()), whatever
  // the documentation text says; an entry not yet declared with a unit has
  // none.
  EXPECT_EQ(both.entries[0].unit, entry_unit("Electron contact/Work function"));
  EXPECT_EQ(plan.entries[1].unit, entry_unit("Geometry/Electron finger width"));
  fs::remove_all(dir);
}

// Every grid point is checked before anything runs: an unknown entry, a
// value of the wrong type, an out-of-range value in one point, an entry
// both set and swept.
TEST(SweepPlan, InvalidGridPointsAreInputErrors)
{
  const fs::path dir  = fresh_folder("invalid");
  const auto     file = write_case(dir, comb);
  EXPECT_THROW(make_plan(file, {}, {}), InputError);
  EXPECT_THROW(make_plan(file, {}, {"Geometry/Gapp=5,10"}), InputError);
  EXPECT_THROW(make_plan(file, {}, {"Geometry=5,10"}), InputError);
  EXPECT_THROW(make_plan(file, {}, {"Geometry/Gap=5,ten"}), InputError);
  EXPECT_THROW(make_plan(file, {}, {"Geometry/Layout=comb period,circle"}), InputError);
  EXPECT_THROW(make_plan(file, {"Geometry/Gap=5"}, {"Geometry/Gap=5,10"}), InputError);
  EXPECT_THROW(make_plan(file, {}, {"Geometry/Gap=5,10", "Geometry/Gap=20"}), InputError);
  try
    {
      make_plan(file, {}, {"Geometry/Gap=5,-1,10"});
      FAIL() << "a negative gap must be refused";
    }
  catch (const InputError &e)
    {
      // The message names the grid point and the swept entry.
      EXPECT_NE(std::string(e.what()).find("Gap=-1"), std::string::npos) << e.what();
      EXPECT_NE(std::string(e.what()).find("--vary Geometry/Gap"), std::string::npos) << e.what();
    }
  fs::remove_all(dir);
}

// The best case and the contiguous run within 2 % of its PCE, on the line
// of the best case (numbers constructed: 0.98 * 10 = 9.8 is the limit).
TEST(SweepRecommendation, BestAndNearBestRange)
{
  StudyPlan plan;
  plan.entries = {{"Geometry/Gap", {"5", "10", "20", "50", "100"}, "um"}};
  std::vector<StudyRow> rows;
  const std::vector<double> pce = {9.0, 9.85, 10.0, 9.81, 9.9};
  for (std::size_t i = 0; i < pce.size(); ++i)
    {
      StudyRow r;
      r.id     = "Gap=" + plan.entries[0].values[i];
      r.values = {plan.entries[0].values[i]};
      r.status = Status::converged;
      r.PCE    = pce[i];
      rows.push_back(r);
    }
  Recommendation rec = recommend(plan, rows);
  ASSERT_TRUE(rec.valid);
  EXPECT_EQ(rec.best, 2u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{1, 2, 3, 4}));
  EXPECT_TRUE(rec.at_edge == false);

  // A failed neighbour ends the run: nothing is known there.
  rows[3].status = Status::failed;
  rows[3].PCE.reset();
  rec = recommend(plan, rows);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{1, 2}));
  EXPECT_NE(rec.text.find("1 of 5 cases failed"), std::string::npos) << rec.text;

  // Best at the end of the swept range: say so.
  rows[4].PCE = 10.5;
  rec         = recommend(plan, rows);
  EXPECT_EQ(rec.best, 4u);
  EXPECT_TRUE(rec.at_edge);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{4}));

  // No power anywhere: no recommendation.
  for (auto &r : rows)
    r.PCE.reset();
  EXPECT_FALSE(recommend(plan, rows).valid);
}

// One converged row per gap of `plan` with PCE per footprint `period` and,
// when given, the whole comb cell's PCE `cell` (numbers constructed).
namespace
{
  std::vector<StudyRow>
  gap_rows(const StudyPlan &plan, const std::vector<double> &period, const std::vector<double> &cell)
  {
    std::vector<StudyRow> rows;
    for (std::size_t i = 0; i < period.size(); ++i)
      {
        StudyRow r;
        r.id     = "Gap=" + plan.entries[0].values[i];
        r.values = {plan.entries[0].values[i]};
        r.status = Status::converged;
        r.PCE    = period[i];
        if (!cell.empty())
          r.PCE_cell = cell[i];
        rows.push_back(r);
      }
    return rows;
  }
} // namespace

// With the whole comb cell computed, its PCE decides: the fingers'
// resistance moves the best gap to a narrower pitch (numbers constructed).
TEST(SweepRecommendation, WholeCellPceDecidesWhenPresent)
{
  StudyPlan plan;
  plan.entries                     = {{"Geometry/Gap", {"5", "10", "20"}, "um"}};
  const std::vector<StudyRow> rows = gap_rows(plan, {9.0, 9.5, 10.0}, {9.1, 9.2, 8.0});
  const Recommendation rec = recommend(plan, rows);
  ASSERT_TRUE(rec.valid);
  EXPECT_EQ(rec.best, 1u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{0, 1}));
  EXPECT_NE(rec.text.find("whole comb cell"), std::string::npos) << rec.text;
}

// The criterion that decided is the one the sentence and sweep.json state:
// the PCE per footprint without an Electrodes section, the whole comb
// cell's PCE with one (numbers constructed so that the two criteria pick
// different gaps: 10.0 % per footprint at 20 um, 9.2 % of the cell at 10 um).
TEST(SweepRecommendation, StatesTheCriterionThatDecided)
{
  StudyPlan plan;
  plan.case_file = "case.prm";
  plan.entries   = {{"Geometry/Gap", {"5", "10", "20"}, "um"}};
  const std::vector<double> cell = {9.1, 9.2, 8.0};
  std::vector<StudyRow>     rows = gap_rows(plan, {9.0, 9.5, 10.0}, {});
  const Recommendation footprint = recommend(plan, rows);
  ASSERT_TRUE(footprint.valid);
  EXPECT_EQ(footprint.criterion, Criterion::pce_per_footprint);
  EXPECT_EQ(footprint.best, 2u);
  EXPECT_NE(footprint.text.find("(highest PCE per footprint)"), std::string::npos) << footprint.text;
  EXPECT_EQ(footprint.text.find("comb cell"), std::string::npos) << footprint.text;
  const nlohmann::json by_footprint = study_json(plan, rows, footprint)["recommendation"];
  EXPECT_EQ(by_footprint["criterion"], "highest PCE per footprint");
  EXPECT_EQ(by_footprint["best_case"], "Gap=20");

  for (std::size_t i = 0; i < rows.size(); ++i)
    rows[i].PCE_cell = cell[i];
  const Recommendation whole = recommend(plan, rows);
  ASSERT_TRUE(whole.valid);
  EXPECT_EQ(whole.criterion, Criterion::pce_of_comb_cell);
  EXPECT_EQ(whole.best, 1u);
  EXPECT_NE(whole.text.find("(highest PCE of the whole comb cell)"), std::string::npos) << whole.text;
  EXPECT_NE(whole.text.find("PCE 9.2 %"), std::string::npos) << whole.text;
  EXPECT_EQ(whole.text.find("per footprint"), std::string::npos) << whole.text;
  const nlohmann::json by_cell = study_json(plan, rows, whole)["recommendation"];
  EXPECT_EQ(by_cell["criterion"], "highest PCE of the whole comb cell");
  EXPECT_EQ(by_cell["best_case"], "Gap=10");
  EXPECT_EQ(by_cell["text"], whole.text);
}

// The one text form of each status (as summary.json, sweep.csv and
// sweep.json hold it) reads back as the same status; other text is none.
TEST(StudyStatus, TextRoundTrip)
{
  const std::map<Status, std::string> text = {{Status::converged, "converged"},
                                              {Status::partial, "partial"},
                                              {Status::failed, "failed"},
                                              {Status::missing, "missing"}};
  for (const auto &[status, name] : text)
    {
      EXPECT_EQ(to_string(status), name);
      EXPECT_EQ(status_from_string(name), status) << name;
    }
  for (const std::string other : {"", "Converged", "ok", "failed ", "unknown"})
    EXPECT_FALSE(status_from_string(other).has_value()) << "'" << other << "'";
}

namespace
{
  // A unit as file formats spell it inside a name (CSV header, JSON key),
  // written out here independently of the column table.
  std::string
  unit_in_name(const std::string &unit)
  {
    static const std::map<std::string, std::string> names = {
      {"um", "_um"},          {"V", "_V"},           {"%", "percent"},
      {"mA/cm^2", "_mA_per_cm2"}, {"mW/cm^2", "_mW_per_cm2"}, {"ohm cm^2", "_ohm_cm2"}, {"s", "seconds"}};
    return names.at(unit);
  }

  std::vector<std::string>
  split_at(const std::string &line, const std::string &separator)
  {
    std::vector<std::string> parts;
    std::size_t              from = 0;
    for (std::size_t at; (at = line.find(separator, from)) != std::string::npos; from = at + separator.size())
      parts.push_back(line.substr(from, at - from));
    parts.push_back(line.substr(from));
    for (auto &p : parts)
      p = trim(p);
    return parts;
  }

  std::vector<std::string>
  data_lines(const std::string &text)
  {
    std::vector<std::string> lines;
    std::istringstream       in(text);
    for (std::string line; std::getline(in, line);)
      if (!line.empty() && line[0] != '#')
        lines.push_back(line);
    return lines;
  }

  // Column k of the table gets the value 1 + (k + 1)/8 (exact in binary,
  // so every format prints it exactly), a count k + 1.
  double
  test_value(const Column &c, const std::size_t k)
  {
    return c.whole ? double(k + 1) : 1 + (k + 1) / 8.0;
  }
} // namespace

// Every column of the one table appears in the sweep.csv header and rows,
// in sweep.json at its path, and, when marked, in the screen table at its
// position, each with its unit; an absent value is an empty CSV cell, a
// JSON null and a '-' on screen.
TEST(StudyColumns, EveryColumnInCsvJsonAndScreen)
{
  StudyPlan plan;
  plan.case_file = "case.prm";
  plan.entries   = {{"Geometry/Gap", {"5", "10"}, "um"}};
  StudyRow full, empty;
  full.id = "Gap=5", full.values = {"5"}, full.status = Status::converged;
  empty.id = "Gap=10", empty.values = {"10"}, empty.status = Status::missing, empty.reason = "not computed yet";
  for (std::size_t k = 0; k < columns().size(); ++k)
    full.*columns()[k].field = test_value(columns()[k], k);
  const std::vector<StudyRow> rows = {full, empty};

  const auto csv = data_lines(csv_text(plan, rows));
  ASSERT_EQ(csv.size(), 3u);
  const auto header = split_at(csv[0], ","), first = split_at(csv[1], ","), second = split_at(csv[2], ",");
  EXPECT_EQ(header.front(), "case");
  EXPECT_EQ(header[1], "Geometry/Gap [um]");
  EXPECT_EQ(header[header.size() - 2], "status");
  EXPECT_EQ(header.back(), "reason");
  EXPECT_EQ(first.size(), header.size());
  EXPECT_EQ(second.size(), header.size());
  EXPECT_EQ(first[first.size() - 2], "converged");
  EXPECT_EQ(second[second.size() - 2], "missing");
  std::size_t in_csv = 0;

  const nlohmann::json json_full = row_json(plan, full), json_empty = row_json(plan, empty);
  EXPECT_EQ(json_full["status"], "converged");
  EXPECT_EQ(json_empty["status"], "missing");
  EXPECT_EQ(json_full["values"]["Geometry/Gap"], "5");

  const auto screen = data_lines(screen_table(plan, rows));
  ASSERT_EQ(screen.size(), 4u); // header, rule, two rows
  const auto screen_header = split_at(screen[0], " | "), screen_full = split_at(screen[2], " | "),
             screen_empty  = split_at(screen[3], " | ");
  EXPECT_EQ(screen_header.front(), "Gap (um)");
  EXPECT_EQ(screen_header.back(), "status");
  EXPECT_EQ(screen_full.back(), "converged");
  std::size_t on_screen = 0;

  for (std::size_t k = 0; k < columns().size(); ++k)
    {
      const Column &c     = columns()[k];
      const double  value = test_value(c, k);
      const std::string name =
        c.csv_header.empty() ? c.json_path.back() : c.csv_header; // for the messages
      if (!c.csv_header.empty())
        {
          ++in_csv;
          const auto at = std::find(header.begin(), header.end(), c.csv_header);
          ASSERT_NE(at, header.end()) << name;
          const auto i = std::size_t(at - header.begin());
          EXPECT_EQ(std::stod(first[i]), value) << name;
          EXPECT_EQ(second[i], "") << name;
          if (!c.unit.empty())
            {
              const std::string u = unit_in_name(c.unit);
              EXPECT_EQ(c.csv_header.substr(c.csv_header.size() - u.size()), u) << name;
            }
        }
      // sweep.json: the value at the column's path, its unit in the path.
      const nlohmann::json *node = &json_full, *absent = &json_empty;
      for (const auto &key : c.json_path)
        {
          ASSERT_TRUE(node->contains(key)) << name;
          node = &node->at(key), absent = &absent->at(key);
        }
      EXPECT_EQ(node->get<double>(), value) << name;
      EXPECT_TRUE(absent->is_null()) << name;
      std::string path;
      for (const auto &key : c.json_path)
        path += key + "/";
      if (!c.unit.empty())
        {
          EXPECT_NE(path.find(unit_in_name(c.unit)), std::string::npos) << name;
        }
      if (c.screen_position > 0)
        {
          ++on_screen;
          const std::size_t i = std::size_t(c.screen_position); // after the one entry column
          ASSERT_LT(i, screen_header.size()) << name;
          EXPECT_EQ(screen_header[i], c.screen_header) << name;
          EXPECT_EQ(screen_full[i], format_fixed(value, c.screen_decimals)) << name;
          EXPECT_EQ(screen_empty[i], "-") << name;
          // A unit shown in parentheses is the column's (written without '^').
          const auto open = c.screen_header.find('(');
          if (open != std::string::npos)
            {
              std::string unit = c.unit;
              unit.erase(std::remove(unit.begin(), unit.end(), '^'), unit.end());
              EXPECT_EQ(c.screen_header.substr(open + 1, c.screen_header.size() - open - 2), unit) << name;
            }
        }
    }
  // Nothing but the table between the fixed frame of the outputs.
  EXPECT_EQ(header.size(), 2 + in_csv + 2);
  EXPECT_EQ(screen_header.size(), 1 + on_screen + 1);
}

// A case's summary.json, written by hand as a solve writes it, fills every
// column that a summary holds; a failed case keeps its sizes, counts and
// time but no metrics; an unknown status is a failed case.
TEST(StudyColumns, SummaryJsonFillsEveryColumn)
{
  nlohmann::json s = nlohmann::json::parse(R"({
    "status": "converged",
    "footprint_width_um": 40, "active_width_um": 30,
    "collection_efficiency": 0.95,
    "metrics": {"Jsc_mA_per_cm2": 20.5, "Voc_V": 0.75, "FF": 0.8, "PCE_percent": 12.25,
                "per_active_area": {"Jsc_mA_per_cm2": 27.5, "PCE_percent": 16.5}},
    "dead_zone": {"area_fraction": 0.125},
    "hysteresis_scan": {"hysteresis_index": 0.375},
    "losses": {"points": {"max_power": {"split": {"recombination": 3.5, "film_joule": 0.5, "contacts": 0.25}}},
               "electrodes_at_cell_max_power": {"fingers": 0.75, "contact_resistance": 0.125}},
    "cell": {"metrics": {"PCE_percent": 11.5}},
    "series_resistance": {"total_ohm_cm2": 1.5},
    "newton": {"light_iterations": 7, "dark_iterations": 5, "light_halvings": 1, "dark_halvings": 2},
    "timings_s": {"total": 2.5}
  })");
  StudyRow r;
  read_summary(s, r);
  EXPECT_EQ(r.status, Status::converged);
  EXPECT_EQ(r.footprint_width_um, 40.0);
  EXPECT_EQ(r.active_width_um, 30.0);
  EXPECT_EQ(r.collection_efficiency, 0.95);
  EXPECT_EQ(r.Jsc, 20.5);
  EXPECT_EQ(r.Voc, 0.75);
  EXPECT_EQ(r.FF, 0.8);
  EXPECT_EQ(r.PCE, 12.25);
  EXPECT_EQ(r.Jsc_active, 27.5);
  EXPECT_EQ(r.PCE_active, 16.5);
  EXPECT_EQ(r.dead_zone_fraction, 0.125);
  EXPECT_EQ(r.hysteresis_index, 0.375);
  EXPECT_EQ(r.loss_recombination, 3.5);
  EXPECT_EQ(r.loss_film_joule, 0.5);
  EXPECT_EQ(r.loss_contacts, 0.25);
  EXPECT_EQ(r.loss_electrodes, 0.75 + 0.125); // fingers plus contact resistance
  EXPECT_EQ(r.PCE_cell, 11.5);
  EXPECT_EQ(r.series_resistance, 1.5);
  EXPECT_EQ(r.newton_iterations, 7.0 + 5.0); // light plus dark J-V
  EXPECT_EQ(r.step_halvings, 1.0 + 2.0);
  EXPECT_EQ(r.seconds, 2.5);
  // Every column but the pitch (which the plan gives) came from the summary.
  for (const auto &c : columns())
    EXPECT_EQ((r.*c.field).has_value(), c.field != &StudyRow::pitch_um) << c.csv_header;

  s["status"]   = "failed";
  s["failures"] = nlohmann::json::array({"equilibrium: Newton did not converge\nsecond line"});
  StudyRow f;
  read_summary(s, f);
  EXPECT_EQ(f.status, Status::failed);
  EXPECT_EQ(f.reason, "equilibrium: Newton did not converge");
  EXPECT_FALSE(f.PCE || f.collection_efficiency || f.loss_electrodes || f.PCE_cell || f.dead_zone_fraction);
  EXPECT_EQ(f.footprint_width_um, 40.0);
  EXPECT_EQ(f.newton_iterations, 12.0);
  EXPECT_EQ(f.seconds, 2.5);

  s["status"] = "done";
  StudyRow u;
  read_summary(s, u);
  EXPECT_EQ(u.status, Status::failed);
  EXPECT_FALSE(u.PCE);
}

// A sweep killed part-way resumes without recomputing finished cases, and
// the final table equals that of an uninterrupted run.
TEST(SweepRun, ResumeRecomputesOnlyUnfinishedCases)
{
  const fs::path dir  = fresh_folder("resume");
  const std::string file = tiny_strip_file;
  const StudyPlan plan = make_plan(file, {}, {"Geometry/Strip length=0.5,1,2"});
  StudyOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(run_study(plan, o), 0);
  const std::string uninterrupted = read_file(dir / "out" / "sweep.csv");
  ASSERT_EQ(csv_rows(dir / "out" / "sweep.csv").size(), 4u); // header + 3

  // Every pair is collected: eta_c = 1 (charge conservation; analytic).
  for (const auto &[id, c] : cases_by_id(dir / "out" / "sweep.json"))
    {
      EXPECT_EQ(c["status"], "converged") << id;
      EXPECT_NEAR(double(c["collection_efficiency"]), 1.0, 2e-3) << id;
    }

  // Simulate a kill: one case never started, one was interrupted (files
  // but no summary.json), and the merged table is gone.
  const fs::path cases = dir / "out" / "cases";
  fs::remove_all(cases / "Strip_length=0.5");
  fs::remove(cases / "Strip_length=2" / "summary.json");
  fs::remove(dir / "out" / "sweep.csv");
  const auto kept_time = fs::last_write_time(cases / "Strip_length=1" / "summary.json");

  ASSERT_EQ(run_study(plan, o), 0);
  EXPECT_EQ(fs::last_write_time(cases / "Strip_length=1" / "summary.json"), kept_time);
  EXPECT_TRUE(fs::exists(cases / "Strip_length=0.5" / "summary.json"));
  EXPECT_TRUE(fs::exists(cases / "Strip_length=2" / "summary.json"));
  EXPECT_EQ(read_file(dir / "out" / "sweep.csv"), uninterrupted);

  // The same folder with another grid is refused before anything is written.
  const StudyPlan other = make_plan(file, {}, {"Geometry/Strip length=0.5,1"});
  EXPECT_THROW(run_study(other, o), InputError);
  fs::remove_all(dir);
}

// Array-task shares followed by a merge give the serial table; a merge
// before every share has run reports the missing cases.
TEST(SweepRun, TaskSharesPlusMergeEqualSerial)
{
  const fs::path dir  = fresh_folder("tasks");
  const std::string file = tiny_strip_file;
  const StudyPlan plan = make_plan(file, {}, {"Geometry/Strip length=0.5,1,2"});
  StudyOptions serial;
  serial.folder = (dir / "serial").string();
  serial.quiet  = true;
  ASSERT_EQ(run_study(plan, serial), 0);

  StudyOptions share = serial;
  share.folder       = (dir / "tasks").string();
  share.tasks        = 2;
  share.task         = 1; // cases 0 and 2
  ASSERT_EQ(run_study(plan, share), 0);
  EXPECT_FALSE(fs::exists(dir / "tasks" / "sweep.csv")); // a share does not merge
  EXPECT_FALSE(fs::exists(dir / "tasks" / "cases" / "Strip_length=1"));

  EXPECT_EQ(merge_study(share.folder, true), exit_no_convergence);
  auto partial = cases_by_id(dir / "tasks" / "sweep.json");
  EXPECT_EQ(partial["Strip_length=1"]["status"], "missing");
  EXPECT_TRUE(partial["Strip_length=1"]["PCE_percent"].is_null());
  EXPECT_EQ(partial["Strip_length=2"]["status"], "converged");

  share.task = 2;
  ASSERT_EQ(run_study(plan, share), 0);
  ASSERT_EQ(merge_study(share.folder, true), 0);
  EXPECT_EQ(read_file(dir / "tasks" / "sweep.csv"), read_file(dir / "serial" / "sweep.csv"));
  EXPECT_TRUE(fs::exists(dir / "tasks" / "sweep.svg"));
  EXPECT_TRUE(fs::exists(dir / "tasks" / "sweep.png"));
  fs::remove_all(dir);
}

// One grid point whose Newton solve cannot converge (one iteration allowed)
// and one that throws (an invalid override slipped into the plan) are
// recorded as failed with their reasons; the other points complete, and
// the failed rows carry no numbers.
TEST(SweepRun, FailingCasesAreRecordedAndOthersComplete)
{
  const fs::path dir  = fresh_folder("failing");
  const std::string file = tiny_strip_file;
  StudyPlan plan = make_plan(file, {}, {"Numerics/Newton iterations=60,1,50"});
  plan.cases[2].overrides.push_back("Geometry/Strip length=-1");
  StudyOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  EXPECT_EQ(run_study(plan, o), exit_no_convergence);

  auto c = cases_by_id(dir / "out" / "sweep.json");
  EXPECT_EQ(c["Newton_iterations=60"]["status"], "converged");
  EXPECT_NEAR(double(c["Newton_iterations=60"]["collection_efficiency"]), 1.0, 2e-3); // analytic, as above
  EXPECT_EQ(c["Newton_iterations=1"]["status"], "failed");
  EXPECT_NE(c["Newton_iterations=1"]["reason"].get<std::string>().find("Newton"), std::string::npos);
  EXPECT_TRUE(c["Newton_iterations=1"]["PCE_percent"].is_null());
  EXPECT_TRUE(c["Newton_iterations=1"]["collection_efficiency"].is_null());
  EXPECT_EQ(c["Newton_iterations=50"]["status"], "failed");
  EXPECT_NE(c["Newton_iterations=50"]["reason"].get<std::string>().find("Strip length"), std::string::npos);
  EXPECT_TRUE(fs::exists(dir / "out" / "cases" / "Newton_iterations=50" / "failed.json"));

  // In the table the failed rows have empty metric cells, never numbers.
  for (const auto &row : csv_rows(dir / "out" / "sweep.csv"))
    {
      if (row.rfind("Newton_iterations=1,", 0) == 0)
        {
          EXPECT_NE(row.find(",,,,,,,,"), std::string::npos) << row;
        }
    }

  // The recommendation is made from the finished cases.
  std::ifstream        in(dir / "out" / "sweep.json");
  const nlohmann::json j = nlohmann::json::parse(in);
  EXPECT_EQ(j["recommendation"]["best_case"], "Newton_iterations=60");
  EXPECT_EQ(j["counts"]["failed"], 2);

  // A rerun keeps the failed cases; --retry-failed recomputes them.
  const auto failed_time = fs::last_write_time(dir / "out" / "cases" / "Newton_iterations=1" / "summary.json");
  EXPECT_EQ(run_study(plan, o), exit_no_convergence);
  EXPECT_EQ(fs::last_write_time(dir / "out" / "cases" / "Newton_iterations=1" / "summary.json"), failed_time);
  fs::remove_all(dir);
}

// --in-step: a linked entry takes the i-th value with its --vary entry's
// i-th value, so it adds no cases (3 x 2 = 6 cases, not 3 x 3 x 2 = 18);
// each case carries both overrides and both values in its folder name.
TEST(SweepPlan, InStepEntriesMoveWithTheirVaryEntry)
{
  const fs::path dir  = fresh_folder("in-step");
  const auto     file = write_case(dir, comb);
  const StudyPlan plan =
    make_plan(file, {}, {"Geometry/Gap=5,10,20", "Geometry/Electron finger width=2,4"},
              {{1, "Gap interface/Electron recombination velocity=10,100,1000"},
               {1, "Gap interface/Hole recombination velocity=1,2,3"},
               {2, "Geometry/Hole finger width=3,5"}});
  ASSERT_EQ(plan.cases.size(), 6u);
  EXPECT_EQ(axis_count(plan), 2u);
  ASSERT_EQ(plan.entries.size(), 5u);
  EXPECT_EQ(plan.entries[1].path, "Gap interface/Electron recombination velocity");
  EXPECT_EQ(plan.entries[1].in_step_with, "Geometry/Gap");
  EXPECT_EQ(plan.entries[4].in_step_with, "Geometry/Electron finger width");
  EXPECT_EQ(plan.entries[1].unit, "cm/s");
  EXPECT_EQ(plan.cases[1].id, "Gap=10__Electron_recombination_velocity=100__Hole_recombination_velocity=2__"
                              "Electron_finger_width=2__Hole_finger_width=3");
  EXPECT_EQ(plan.cases[5].overrides,
            (std::vector<std::string>{"Geometry/Gap=20", "Gap interface/Electron recombination velocity=1000",
                                      "Gap interface/Hole recombination velocity=3",
                                      "Geometry/Electron finger width=4", "Geometry/Hole finger width=5"}));
  // The linked finger width enters the pitch: 4 + 5 + 2 * 20.
  EXPECT_DOUBLE_EQ(plan.cases[5].pitch_um, 49.0);
  EXPECT_DOUBLE_EQ(plan.cases[5].gap_um, 20.0);
  for (const auto &c : plan.cases)
    {
      const std::size_t at = std::size_t(
        std::find(plan.entries[0].values.begin(), plan.entries[0].values.end(), c.values[0]) -
        plan.entries[0].values.begin());
      EXPECT_EQ(c.values[1], plan.entries[1].values[at]) << c.id;
      EXPECT_EQ(c.values[2], plan.entries[2].values[at]) << c.id;
    }

  // The plan's lines: one per finger width (the linked velocities move
  // along the gap, not across lines).
  std::vector<StudyRow> rows;
  for (const auto &c : plan.cases)
    {
      StudyRow r;
      r.id     = c.id;
      r.values = c.values;
      rows.push_back(r);
    }
  EXPECT_EQ(lines_of(plan, rows).size(), 2u);

  // Round trip through sweep-plan.json: the same plan, and no difference.
  const StudyPlan back = plan_from_json(nlohmann::json::parse(plan_to_json(plan).dump()), "sweep-plan.json");
  ASSERT_EQ(back.entries.size(), plan.entries.size());
  for (std::size_t k = 0; k < plan.entries.size(); ++k)
    {
      EXPECT_EQ(back.entries[k].path, plan.entries[k].path);
      EXPECT_EQ(back.entries[k].values, plan.entries[k].values);
      EXPECT_EQ(back.entries[k].in_step_with, plan.entries[k].in_step_with);
    }
  ASSERT_EQ(back.cases.size(), plan.cases.size());
  for (std::size_t i = 0; i < plan.cases.size(); ++i)
    {
      EXPECT_EQ(back.cases[i].id, plan.cases[i].id);
      EXPECT_EQ(back.cases[i].overrides, plan.cases[i].overrides);
      EXPECT_EQ(back.cases[i].fingerprint, plan.cases[i].fingerprint);
    }
  EXPECT_EQ(plan_difference(back, plan), "");
  // The same entries as a grid are another plan (a resume refuses it).
  const StudyPlan grid =
    make_plan(file, {}, {"Geometry/Gap=5,10,20", "Gap interface/Electron recombination velocity=10,100,1000"});
  const StudyPlan linked =
    make_plan(file, {}, {"Geometry/Gap=5,10,20"}, {{1, "Gap interface/Electron recombination velocity=10,100,1000"}});
  EXPECT_EQ(grid.cases.size(), 9u);
  EXPECT_EQ(linked.cases.size(), 3u);
  EXPECT_NE(plan_difference(grid, linked).find("moves with another entry"), std::string::npos)
    << plan_difference(grid, linked);
  fs::remove_all(dir);
}

// --in-step errors name the option, the entry and the value.
TEST(SweepPlan, InStepErrorsNameOptionAndValue)
{
  const fs::path dir  = fresh_folder("in-step-errors");
  const auto     file = write_case(dir, comb);
  const auto     message = [&](const std::vector<std::string> &sets, const std::vector<std::string> &vary,
                           const std::vector<InStepArgument> &in_step) {
    try
      {
        make_plan(file, sets, vary, in_step);
      }
    catch (const InputError &e)
      {
        return std::string(e.what());
      }
    return std::string("no error");
  };
  const std::string velocity = "Gap interface/Electron recombination velocity";
  // A different number of values.
  std::string m = message({}, {"Geometry/Gap=5,10,20"}, {{1, velocity + "=10,100"}});
  EXPECT_NE(m.find("--in-step " + velocity + " = 10: has 2 values, but the --vary entry Geometry/Gap it moves "
                                             "with has 3"),
            std::string::npos)
    << m;
  // Linked twice (to the same or to another --vary entry).
  m = message({}, {"Geometry/Gap=5,10", "Geometry/Electron finger width=2,4"},
              {{1, velocity + "=1,2"}, {2, velocity + "=3,4"}});
  EXPECT_NE(m.find("--in-step " + velocity + " = 3: is given with --in-step more than once"), std::string::npos) << m;
  // Linked to itself.
  m = message({}, {"Geometry/Gap=5,10"}, {{1, "Geometry/Gap=6,11"}});
  EXPECT_NE(m.find("--in-step Geometry/Gap = 6: is linked to itself"), std::string::npos) << m;
  // Linked to an entry that is also varied.
  m = message({}, {"Geometry/Gap=5,10", "Geometry/Electron finger width=2,4"},
              {{1, "Geometry/Electron finger width=3,5"}});
  EXPECT_NE(m.find("--in-step Geometry/Electron finger width = 3: is also given with --vary"), std::string::npos)
    << m;
  // No --vary before it, also given with --set, unknown entry, a
  // Fabrication entry, a bad value in one linked grid point.
  m = message({}, {"Geometry/Gap=5,10"}, {{0, velocity + "=1,2"}});
  EXPECT_NE(m.find("--in-step " + velocity + " = 1: must follow the --vary entry"), std::string::npos) << m;
  m = message({velocity + "=7"}, {"Geometry/Gap=5,10"}, {{1, velocity + "=1,2"}});
  EXPECT_NE(m.find("is also given with --set"), std::string::npos) << m;
  m = message({}, {"Geometry/Gap=5,10"}, {{1, "Gap interface/Electron velocity=1,2"}});
  EXPECT_NE(m.find("--in-step Gap interface/Electron velocity = 1: unknown entry"), std::string::npos) << m;
  m = message({}, {"Geometry/Gap=5,10"}, {{1, "Fabrication/Gap tolerance=1,2"}});
  EXPECT_NE(m.find("--in-step Fabrication/Gap tolerance = 1: the Fabrication section applies to the whole sweep"),
            std::string::npos)
    << m;
  m = message({}, {"Geometry/Gap=5,10"}, {{1, velocity + "=1,-2"}});
  EXPECT_NE(m.find("grid point Gap=10__Electron_recombination_velocity=-2"), std::string::npos) << m;
  EXPECT_NE(m.find("--in-step " + velocity), std::string::npos) << m;
  fs::remove_all(dir);
}

// The Fabrication section reaches the plan (case file and --set) and is
// checked like every entry.
TEST(SweepPlan, FabricationSectionIsReadAndChecked)
{
  const fs::path dir  = fresh_folder("fabrication");
  const auto     file = write_case(dir, std::string(comb) + R"(
subsection Fabrication
  set Smallest gap = 8
  set Largest gap = 30
  set Cost per gap = 5:3, 20:1, 40:2
end
)");
  const StudyPlan plan = make_plan(file, {"Fabrication/Gap tolerance=2.5"}, {"Geometry/Gap=5,10"});
  EXPECT_EQ(plan.fabrication.smallest_gap_um, 8);
  EXPECT_EQ(plan.fabrication.largest_gap_um, 30);
  EXPECT_EQ(plan.fabrication.gap_tolerance_um, 2.5);
  EXPECT_EQ(plan.fabrication.near_best_percent, 2);
  // Linear between the pairs, constant beyond: 3 + (1 - 3) * 5 / 15 at 10 um.
  EXPECT_DOUBLE_EQ(plan.fabrication.cost_at(10), 3 - 2.0 / 3);
  EXPECT_DOUBLE_EQ(plan.fabrication.cost_at(1), 3);
  EXPECT_DOUBLE_EQ(plan.fabrication.cost_at(100), 2);
  const StudyPlan back = plan_from_json(nlohmann::json::parse(plan_to_json(plan).dump()), "sweep-plan.json");
  EXPECT_EQ(back.fabrication.gap_cost, plan.fabrication.gap_cost);
  EXPECT_EQ(back.fabrication.gap_tolerance_um, 2.5);
  const auto error = [&](const std::string &set) {
    try
      {
        make_plan(file, {set}, {"Geometry/Gap=5,10"});
      }
    catch (const InputError &e)
      {
        return std::string(e.what());
      }
    return std::string("no error");
  };
  EXPECT_NE(error("Fabrication/Largest gap=6").find("Fabrication/Largest gap = 6: must not be below Smallest gap"),
            std::string::npos)
    << error("Fabrication/Largest gap=6");
  EXPECT_NE(error("Fabrication/Cost per gap=5:1, 4:2").find("the gaps must increase"), std::string::npos);
  EXPECT_NE(error("Fabrication/Cost per gap=5").find("gap:cost pairs"), std::string::npos);
  EXPECT_NE(error("Fabrication/Cost per gap=5:-1").find("the cost >= 0"), std::string::npos);
  EXPECT_NE(error("Fabrication/Near-best margin=0").find("Fabrication/Near-best margin"), std::string::npos);
  fs::remove_all(dir);
}

// The gap to make, on constructed rows (PCE in %, losses in mW/cm^2):
//   gap  5     10     20      40    60    80
//   PCE  10.0  10.05  10.045  9.90  9.70  9.00
// best 10 um; margin 2 %: limit 0.98 * 10.05 = 9.849, so 5..40 um are
// near the best and 40 um is the widest; 60 um is the next gap. 20 um
// differs from the best by 0.005 / 10.05 = 5.0e-4 < 1e-3: not separable.
namespace
{
  StudyPlan
  fabrication_plan()
  {
    StudyPlan plan;
    plan.entries = {{"Geometry/Gap", {"5", "10", "20", "40", "60", "80"}, "um"}};
    return plan;
  }

  std::vector<StudyRow>
  fabrication_rows(const StudyPlan &plan)
  {
    std::vector<StudyRow> rows = gap_rows(plan, {10.0, 10.05, 10.045, 9.90, 9.70, 9.00}, {});
    rows[1].loss_parts = {{"gap_interface_recombination", 1.0}, {"film_joule", 0.5}, {"finger_resistance", 0.2}};
    rows[4].loss_parts = {{"gap_interface_recombination", 1.3}, {"film_joule", 1.2}, {"finger_resistance", 0.25}};
    return rows;
  }
} // namespace

TEST(SweepRecommendation, WidestGapWithinMarginAndWhatLimitsIt)
{
  StudyPlan                   plan = fabrication_plan();
  const std::vector<StudyRow> rows = fabrication_rows(plan);
  Recommendation              rec  = recommend(plan, rows);
  ASSERT_TRUE(rec.valid);
  ASSERT_TRUE(rec.gap_study);
  EXPECT_EQ(rec.best, 1u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{0, 1, 2, 3}));
  EXPECT_EQ(*rec.widest, 3u);
  EXPECT_EQ(*rec.chosen, 3u);
  EXPECT_EQ(*rec.beyond, 4u);
  EXPECT_EQ(rec.inseparable, (std::vector<std::size_t>{2}));
  EXPECT_FALSE(rec.limit_unresolved);
  // Growth from 10 to 60 um: gap interface +0.3, film +0.7, fingers +0.05.
  EXPECT_EQ(rec.limiting_loss, "film_joule");
  EXPECT_NEAR(rec.limiting_growth, 0.7, 1e-12);
  EXPECT_EQ(rec.tolerance, ToleranceCheck::not_asked);
  EXPECT_NE(rec.text.find("Widest gap within 2 % of the best: 40 um (PCE 9.9 %)"), std::string::npos) << rec.text;
  EXPECT_NE(rec.text.find("Make 40 um."), std::string::npos) << rec.text;
  EXPECT_NE(rec.text.find("The solve cannot tell 10 um from 20 um"), std::string::npos) << rec.text;
  EXPECT_NE(rec.text.find("Wider gaps lose most to the film's resistance (Joule heat) (+0.7 mW/cm^2 from 10 um to "
                          "60 um)"),
            std::string::npos)
    << rec.text;
  const nlohmann::json j = study_json(plan, rows, rec)["recommendation"];
  EXPECT_EQ(j["gap"]["best_gap_um"], 10.0);
  EXPECT_EQ(j["gap"]["widest_near_best_gap_um"], 40.0);
  EXPECT_EQ(j["gap"]["recommended_gap_um"], 40.0);
  EXPECT_EQ(j["gap"]["inseparable_from_best_gap_um"], nlohmann::json::array({20.0}));
  EXPECT_EQ(j["gap"]["what_sets_the_limit"]["loss"], "film_joule");
  EXPECT_EQ(j["gap"]["what_sets_the_limit"]["next_gap_um"], 60.0);
  EXPECT_EQ(j["fabrication"]["near_best_percent"], 2.0);

  // Gap tolerance +/- 4 um around 40 um, interpolated linearly:
  // 36 um: 9.90 + 0.145 * 4 / 20 = 9.929; 44 um: 9.90 - 0.2 * 4 / 20 = 9.86,
  // both >= 9.849: within the margin.
  plan.fabrication.gap_tolerance_um = 4;
  rec                               = recommend(plan, rows);
  EXPECT_EQ(rec.tolerance, ToleranceCheck::holds);
  EXPECT_NEAR(*rec.pce_low, 9.929, 1e-9);
  EXPECT_NEAR(*rec.pce_high, 9.86, 1e-9);
  EXPECT_NE(rec.text.find("A gap tolerance of +/- 4 um keeps the PCE within 2 %"), std::string::npos) << rec.text;
  // +/- 10 um: 50 um gives 9.80 < 9.849.
  plan.fabrication.gap_tolerance_um = 10;
  rec                               = recommend(plan, rows);
  EXPECT_EQ(rec.tolerance, ToleranceCheck::fails);
  EXPECT_NEAR(*rec.pce_high, 9.80, 1e-9);
  EXPECT_NE(rec.text.find("does not keep the PCE within 2 %"), std::string::npos) << rec.text;
  // +/- 20 um: the ends are computed gaps (20 um: 10.045, 60 um: 9.70).
  plan.fabrication.gap_tolerance_um = 20;
  rec                               = recommend(plan, rows);
  EXPECT_EQ(rec.tolerance, ToleranceCheck::fails);
  EXPECT_DOUBLE_EQ(*rec.pce_low, 10.045);
  EXPECT_DOUBLE_EQ(*rec.pce_high, 9.70);
  // +/- 50 um: 90 um lies beyond the computed gaps.
  plan.fabrication.gap_tolerance_um = 50;
  EXPECT_EQ(recommend(plan, rows).tolerance, ToleranceCheck::not_known);
  // The next gap failed: what limits wider gaps is not known.
  std::vector<StudyRow> failed = rows;
  failed[4].status             = Status::failed;
  failed[4].PCE.reset();
  rec = recommend(plan, failed);
  EXPECT_EQ(rec.limiting_loss, "");
  EXPECT_NE(rec.text.find("The next gap, 60 um, has no result"), std::string::npos) << rec.text;

  // A wider margin (5 %: limit 9.5475) takes in 60 um; 80 um is next.
  plan.fabrication                   = {};
  plan.fabrication.near_best_percent = 5;
  rec                                = recommend(plan, rows);
  EXPECT_EQ(*rec.widest, 4u);
  EXPECT_EQ(*rec.beyond, 5u);
  EXPECT_EQ(rec.limiting_loss, ""); // no losses known at 80 um
}

// Where the margin ends between two gaps whose PCE differ by less than the
// solve's resolution: 10 um (9.8005) is in, 20 um (9.7995) is out of
// 0.98 * 10 = 9.8, but they differ by 0.001 < 1e-3 * 10.
TEST(SweepRecommendation, UnresolvedEndOfTheMargin)
{
  StudyPlan plan;
  plan.entries                     = {{"Geometry/Gap", {"5", "10", "20"}, "um"}};
  const std::vector<StudyRow> rows = gap_rows(plan, {10.0, 9.8005, 9.7995}, {});
  const Recommendation        rec  = recommend(plan, rows);
  EXPECT_EQ(*rec.widest, 1u);
  EXPECT_EQ(*rec.beyond, 2u);
  EXPECT_TRUE(rec.limit_unresolved);
  EXPECT_TRUE(rec.inseparable.empty());
  EXPECT_NE(rec.text.find("10 um and 20 um cannot be told apart"), std::string::npos) << rec.text;
}

// The recommendation never lies outside the fabrication limits, and with a
// cost it moves to the cheapest gap within the margin.
TEST(SweepRecommendation, FabricationLimitsAndCost)
{
  StudyPlan                   plan = fabrication_plan();
  const std::vector<StudyRow> rows = fabrication_rows(plan);
  // Gaps from 8 to 30 um: 10 and 20 um are candidates; 40 um is beyond
  // the process, which is then what sets the limit.
  plan.fabrication.smallest_gap_um = 8;
  plan.fabrication.largest_gap_um  = 30;
  Recommendation rec               = recommend(plan, rows);
  EXPECT_EQ(rec.best, 1u);
  EXPECT_EQ(rec.outside_limits, 4u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{1, 2}));
  EXPECT_EQ(*rec.chosen, 2u);
  EXPECT_TRUE(rec.beyond_outside_limits);
  EXPECT_NE(rec.text.find("4 computed cases lie outside the fabrication limits"), std::string::npos) << rec.text;
  EXPECT_NE(rec.text.find("Wider gaps are beyond Fabrication/Largest gap = 30 um"), std::string::npos) << rec.text;
  // Every limit: the recommended gap and the best lie inside.
  for (const auto &[lo, hi] : std::vector<std::pair<double, double>>{{0, 7}, {6, 15}, {15, 50}, {50, 100}, {45, 55}})
    {
      plan.fabrication.smallest_gap_um = lo;
      plan.fabrication.largest_gap_um  = hi;
      rec                              = recommend(plan, rows);
      if (!rec.valid)
        {
          EXPECT_TRUE(lo == 45) << lo << " " << hi; // no computed gap in 45..55
          EXPECT_NE(rec.text.find("no case within the fabrication limits"), std::string::npos) << rec.text;
          continue;
        }
      for (const auto i : {rec.best, *rec.chosen, *rec.widest})
        {
          const double g = *to_number(rows[i].values[0]);
          EXPECT_GE(g, lo);
          EXPECT_LE(g, hi);
        }
    }
  // Cost 5:3, 20:1, 40:2 (10 um: 3 - 2 * 5 / 15 = 2.33): the cheapest gap
  // within the margin (5..40 um) is 20 um at cost 1, not the widest (40 um,
  // cost 2).
  plan.fabrication          = {};
  plan.fabrication.gap_cost = {{5, 3}, {20, 1}, {40, 2}};
  rec                       = recommend(plan, rows);
  EXPECT_EQ(*rec.widest, 3u);
  EXPECT_EQ(*rec.chosen, 2u);
  EXPECT_NE(rec.text.find("Cheapest gap within 2 % of the best (Fabrication/Cost per gap): 20 um (relative cost 1 "
                          "against 2)"),
            std::string::npos)
    << rec.text;
  EXPECT_EQ(study_json(plan, rows, rec)["recommendation"]["gap"]["recommended_gap_um"], 20.0);
  // Equal cost everywhere: the wider gap.
  plan.fabrication.gap_cost = {{5, 1}};
  EXPECT_EQ(*recommend(plan, rows).chosen, 3u);
  // A study over another entry: limits still filter by the cases' gaps,
  // no gap sentences.
  StudyPlan other;
  other.entries = {{"Geometry/Absorber thickness", {"0.3", "0.5"}, "um"}};
  std::vector<StudyRow> two = gap_rows(other, {9.0, 9.5}, {});
  two[0].gap_um             = 10;
  two[1].gap_um             = 50;
  other.fabrication.largest_gap_um = 20;
  rec                              = recommend(other, two);
  EXPECT_FALSE(rec.gap_study);
  EXPECT_EQ(rec.best, 0u);
  EXPECT_EQ(rec.text.find("Widest gap"), std::string::npos) << rec.text;
}

// A whole sweep with an entry in step (tiny strip): 2 cases, not 4; the
// linked entry's column in sweep.csv, its link in sweep.json; a rerun
// resumes, the same entries as a grid are refused in that folder.
TEST(SweepRun, InStepSweepEndToEnd)
{
  const fs::path  dir  = fresh_folder("in-step-run");
  const StudyPlan plan = make_plan(tiny_strip_file, {}, {"Geometry/Strip length=0.5,1"},
                                   {{1, "Absorber/Recombination/SRH/Electron lifetime=1e-5,2e-5"}});
  StudyOptions    o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(run_study(plan, o), 0);
  const std::vector<std::string> rows = csv_rows(dir / "out" / "sweep.csv");
  ASSERT_EQ(rows.size(), 3u); // header + 2
  EXPECT_EQ(rows[0].rfind("case,Geometry/Strip length [um],Absorber/Recombination/SRH/Electron lifetime [s],", 0), 0u)
    << rows[0];
  EXPECT_EQ(rows[2].rfind("Strip_length=1__Electron_lifetime=2e-5,1,2e-5,", 0), 0u) << rows[2];
  std::ifstream        in(dir / "out" / "sweep.json");
  const nlohmann::json j = nlohmann::json::parse(in);
  EXPECT_EQ(j["entries"][1]["in_step_with"], "Geometry/Strip length");
  EXPECT_TRUE(j["entries"][0]["in_step_with"].is_null());
  EXPECT_EQ(j["cases"][1]["values"]["Absorber/Recombination/SRH/Electron lifetime"], "2e-5");
  EXPECT_EQ(j["counts"]["converged"], 2);
  // Not a gap study: no gap sentences, the limits block is there.
  EXPECT_TRUE(j["recommendation"]["gap"].is_null());
  EXPECT_EQ(j["recommendation"]["fabrication"]["cases_outside_limits"], 0);
  ASSERT_EQ(run_study(plan, o), 0);
  const StudyPlan grid = make_plan(tiny_strip_file, {}, {"Geometry/Strip length=0.5,1",
                                                         "Absorber/Recombination/SRH/Electron lifetime=1e-5,2e-5"});
  EXPECT_THROW(run_study(grid, o), InputError);
  fs::remove_all(dir);
}
