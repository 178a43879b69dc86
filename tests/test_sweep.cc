// Parameter sweeps: value lists, the grid, the recommendation, and whole
// sweeps of a tiny fast case (resume, array-task shares plus merge, a
// failing case). The MPI run is checked by tests/sweep_cli.sh.
#include "base/entries.h"
#include "study/study.h"

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
  const SweptEntry e = parse_vary("Geometry/Gap=5,10");
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
  const SweepPlan plan =
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
  const SweepPlan both = make_plan(file, {}, {"Electron contact/Work function=4.0,4.1",
                                              "Hole contact/Work function=5.3"});
  EXPECT_EQ(both.cases[1].id, "Electron_contact_Work_function=4.1__Hole_contact_Work_function=5.3");
  EXPECT_EQ(both.entries[0].unit, "eV");
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
  SweepPlan plan;
  plan.entries = {{"Geometry/Gap", {"5", "10", "20", "50", "100"}, "um"}};
  std::vector<SweepRow> rows;
  const std::vector<double> pce = {9.0, 9.85, 10.0, 9.81, 9.9};
  for (std::size_t i = 0; i < pce.size(); ++i)
    {
      SweepRow r;
      r.id     = "Gap=" + plan.entries[0].values[i];
      r.values = {plan.entries[0].values[i]};
      r.status = "converged";
      r.PCE    = pce[i];
      rows.push_back(r);
    }
  Recommendation rec = recommend(plan, rows);
  ASSERT_TRUE(rec.valid);
  EXPECT_EQ(rec.best, 2u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{1, 2, 3, 4}));
  EXPECT_TRUE(rec.at_edge == false);

  // A failed neighbour ends the run: nothing is known there.
  rows[3].status = "failed";
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

// With the whole comb cell computed, its PCE decides: the fingers'
// resistance moves the best gap to a narrower pitch (numbers constructed).
TEST(SweepRecommendation, WholeCellPceDecidesWhenPresent)
{
  SweepPlan plan;
  plan.entries = {{"Geometry/Gap", {"5", "10", "20"}, "um"}};
  std::vector<SweepRow> rows;
  const std::vector<double> period = {9.0, 9.5, 10.0}, cell = {9.1, 9.2, 8.0};
  for (std::size_t i = 0; i < period.size(); ++i)
    {
      SweepRow r;
      r.id       = "Gap=" + plan.entries[0].values[i];
      r.values   = {plan.entries[0].values[i]};
      r.status   = "converged";
      r.PCE      = period[i];
      r.PCE_cell = cell[i];
      rows.push_back(r);
    }
  const Recommendation rec = recommend(plan, rows);
  ASSERT_TRUE(rec.valid);
  EXPECT_EQ(rec.best, 1u);
  EXPECT_EQ(rec.near_best, (std::vector<std::size_t>{0, 1}));
  EXPECT_NE(rec.text.find("whole comb cell"), std::string::npos) << rec.text;
}

// A sweep killed part-way resumes without recomputing finished cases, and
// the final table equals that of an uninterrupted run.
TEST(SweepRun, ResumeRecomputesOnlyUnfinishedCases)
{
  const fs::path dir  = fresh_folder("resume");
  const std::string file = tiny_strip_file;
  const SweepPlan plan = make_plan(file, {}, {"Geometry/Strip length=0.5,1,2"});
  SweepOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(run_sweep(plan, o), 0);
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

  ASSERT_EQ(run_sweep(plan, o), 0);
  EXPECT_EQ(fs::last_write_time(cases / "Strip_length=1" / "summary.json"), kept_time);
  EXPECT_TRUE(fs::exists(cases / "Strip_length=0.5" / "summary.json"));
  EXPECT_TRUE(fs::exists(cases / "Strip_length=2" / "summary.json"));
  EXPECT_EQ(read_file(dir / "out" / "sweep.csv"), uninterrupted);

  // The same folder with another grid is refused before anything is written.
  const SweepPlan other = make_plan(file, {}, {"Geometry/Strip length=0.5,1"});
  EXPECT_THROW(run_sweep(other, o), InputError);
  fs::remove_all(dir);
}

// Array-task shares followed by a merge give the serial table; a merge
// before every share has run reports the missing cases.
TEST(SweepRun, TaskSharesPlusMergeEqualSerial)
{
  const fs::path dir  = fresh_folder("tasks");
  const std::string file = tiny_strip_file;
  const SweepPlan plan = make_plan(file, {}, {"Geometry/Strip length=0.5,1,2"});
  SweepOptions serial;
  serial.folder = (dir / "serial").string();
  serial.quiet  = true;
  ASSERT_EQ(run_sweep(plan, serial), 0);

  SweepOptions share = serial;
  share.folder       = (dir / "tasks").string();
  share.tasks        = 2;
  share.task         = 1; // cases 0 and 2
  ASSERT_EQ(run_sweep(plan, share), 0);
  EXPECT_FALSE(fs::exists(dir / "tasks" / "sweep.csv")); // a share does not merge
  EXPECT_FALSE(fs::exists(dir / "tasks" / "cases" / "Strip_length=1"));

  EXPECT_EQ(merge_sweep(share.folder, true), exit_no_convergence);
  auto partial = cases_by_id(dir / "tasks" / "sweep.json");
  EXPECT_EQ(partial["Strip_length=1"]["status"], "missing");
  EXPECT_TRUE(partial["Strip_length=1"]["PCE_percent"].is_null());
  EXPECT_EQ(partial["Strip_length=2"]["status"], "converged");

  share.task = 2;
  ASSERT_EQ(run_sweep(plan, share), 0);
  ASSERT_EQ(merge_sweep(share.folder, true), 0);
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
  SweepPlan plan = make_plan(file, {}, {"Numerics/Newton iterations=60,1,50"});
  plan.cases[2].overrides.push_back("Geometry/Strip length=-1");
  SweepOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  EXPECT_EQ(run_sweep(plan, o), exit_no_convergence);

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
  EXPECT_EQ(run_sweep(plan, o), exit_no_convergence);
  EXPECT_EQ(fs::last_write_time(dir / "out" / "cases" / "Newton_iterations=1" / "summary.json"), failed_time);
  fs::remove_all(dir);
}
