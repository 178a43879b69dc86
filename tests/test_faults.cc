// Faults and guard rails: the J-V checkpoint (format, resume equal to an
// uninterrupted run), non-convergence reported per point, and the
// warnings for meshes that cannot resolve the Debye or diffusion length.
// The cases are the tiny test strip of tests/sweep_tiny.prm (round generic
// values, not data of any material) with overrides.
#include "geometry/period_mesh.h"
#include "simulator/case_file.h"
#include "simulator/checkpoint.h"
#include "simulator/guard_rails.h"
#include "simulator/case_run.h"
#include "study/study.h"

#include "tests/temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <unistd.h>

using namespace backcomb;
namespace fs = std::filesystem;

using test_support::fresh_folder;

namespace
{
  const std::string tiny_case = std::string(BACKCOMB_TEST_SOURCE_DIR) + "/sweep_tiny.prm";

  nlohmann::json
  read_json(const fs::path &f)
  {
    std::ifstream in(f);
    return nlohmann::json::parse(in);
  }

  int
  solve(const simulator::Case &c, const fs::path &folder)
  {
    simulator::RunOptions o;
    o.folder = folder.string();
    o.quiet  = true;
    return simulator::run_solve(c, o);
  }

  std::vector<std::string>
  warnings_of(const std::vector<std::string> &overrides)
  {
    const simulator::Case  c = simulator::read_case(tiny_case, overrides);
    dealii::Triangulation<2> tria;
    geometry::build_triangulation(c.geometry, c.mesh, tria);
    return simulator::guard_rail_warnings(c, tria);
  }

  bool
  any_contains(const std::vector<std::string> &list, const std::string &text)
  {
    return std::any_of(list.begin(), list.end(),
                       [&](const std::string &s) { return s.find(text) != std::string::npos; });
  }
} // namespace

// A stored point reads back bit for bit; a changed byte or a cut file is
// recognised as damaged.
TEST(Checkpoint, PointRoundTripAndDamage)
{
  simulator::StoredPoint p;
  p.sweep    = "light";
  p.voltage  = 0.35;
  p.current  = -12.5;
  p.newton   = 7;
  p.halvings = 2;
  p.state.reinit(5);
  for (unsigned i = 0; i < 5; ++i)
    p.state[i] = std::exp(-3.0 * i) - 1e-300 * i;
  const std::string bytes = simulator::encode_point(p);

  simulator::StoredPoint q;
  ASSERT_TRUE(simulator::decode_point(bytes, q));
  EXPECT_EQ(q.sweep, "light");
  EXPECT_EQ(q.voltage, 0.35);
  EXPECT_EQ(q.current, -12.5);
  EXPECT_EQ(q.newton, 7u);
  EXPECT_EQ(q.halvings, 2u);
  ASSERT_EQ(q.state.size(), 5u);
  for (unsigned i = 0; i < 5; ++i)
    EXPECT_EQ(q.state[i], p.state[i]);

  std::string flipped = bytes;
  flipped[bytes.size() / 2] ^= 1;
  EXPECT_FALSE(simulator::decode_point(flipped, q));
  EXPECT_FALSE(simulator::decode_point(bytes.substr(0, bytes.size() - 9), q));
}

// The fingerprint changes with every input that changes the stored states.
TEST(Checkpoint, FingerprintFollowsTheInput)
{
  const fs::path dir = fresh_folder("fingerprint");
  std::ofstream(dir / "a.msh") << "$MeshFormat\n4.1 0 8\n$EndMeshFormat\n";
  const std::string msh = (dir / "a.msh").string();
  const std::string f   = simulator::checkpoint_fingerprint("case", {"A/B=1"}, msh, 100, 1);
  EXPECT_EQ(f, simulator::checkpoint_fingerprint("case", {"A/B=1"}, msh, 100, 1));
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case ", {"A/B=1"}, msh, 100, 1));
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case", {"A/B=2"}, msh, 100, 1));
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case", {"A/B", "=1"}, msh, 100, 1));
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case", {"A/B=1"}, msh, 101, 1));
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case", {"A/B=1"}, msh, 100, 2));
  std::ofstream(dir / "a.msh", std::ios::app) << "$Nodes\n";
  EXPECT_NE(f, simulator::checkpoint_fingerprint("case", {"A/B=1"}, msh, 100, 1));
  fs::remove_all(dir);
}

// A run interrupted after some converged points and run again resumes from
// them and gives the uninterrupted results. The interruption is made
// exact: the first attempt cannot write summary.json (a folder is in its
// way), so it leaves its complete checkpoint; the newest half of the point
// files is then deleted, which is what a kill at that moment leaves.
TEST(Checkpoint, ResumedRunEqualsUninterruptedRun)
{
  const fs::path dir = fresh_folder("resume");
  const simulator::Case c =
    simulator::read_case(tiny_case, {"J-V scan/Dark scan=true", "J-V scan/Voltage step=0.05"});
  ASSERT_EQ(solve(c, dir / "reference"), 0);
  EXPECT_FALSE(fs::exists(dir / "reference" / "checkpoint"));
  const nlohmann::json ref = read_json(dir / "reference" / "summary.json");

  fs::create_directories(dir / "resumed" / "summary.json" / "blocker");
  EXPECT_THROW(solve(c, dir / "resumed"), OutputError);
  std::vector<fs::path> points;
  for (const auto &e : fs::directory_iterator(dir / "resumed" / "checkpoint"))
    if (e.path().extension() == ".bin")
      points.push_back(e.path());
  std::sort(points.begin(), points.end());
  ASSERT_GT(points.size(), 20u);
  const std::size_t kept = points.size() / 2;
  for (std::size_t i = kept; i < points.size(); ++i)
    fs::remove(points[i]);
  fs::remove_all(dir / "resumed" / "summary.json");

  ASSERT_EQ(solve(c, dir / "resumed"), 0);
  const nlohmann::json s = read_json(dir / "resumed" / "summary.json");
  EXPECT_EQ(s["resumed_points"], kept);
  EXPECT_FALSE(fs::exists(dir / "resumed" / "checkpoint"));
  // Equal to Newton tolerance (1e-9 kT/q in the potentials). The two runs
  // reach each point by different Newton paths (a resumed run starts
  // without the factorisation the uninterrupted one reuses), so points agree
  // to the tolerance, not bit for bit: 1e-6 relative on every metric, and
  // on every point's current 1e-6 of its own size or of Jsc (near V_oc the
  // current is a small difference of two currents of the size of Jsc).
  for (const auto &[k, v] : ref["metrics"].items())
    {
      if (v.is_number())
        {
          EXPECT_NEAR(double(s["metrics"][k]), double(v), 1e-6 * std::abs(double(v))) << k;
        }
    }
  ASSERT_EQ(s["points"].size(), ref["points"].size());
  for (std::size_t i = 0; i < s["points"].size(); ++i)
    {
      const double a = s["points"][i]["current_mA_per_cm2"], b = ref["points"][i]["current_mA_per_cm2"];
      EXPECT_NEAR(a, b, 1e-6 * std::max(std::abs(b), std::abs(double(ref["metrics"]["Jsc_mA_per_cm2"]))))
        << s["points"][i].dump();
    }
  fs::remove_all(dir);
}

// A case that cannot converge (one Newton step, no halvings) ends with exit
// code 3, a diagnostic with the bias, the update history and where the
// update was largest, every point marked and no metric as a number.
TEST(Faults, NonConvergenceIsReported)
{
  const fs::path          dir = fresh_folder("noconv");
  const simulator::Case c =
    simulator::read_case(tiny_case, {"Numerics/Newton iterations=1", "Numerics/Step halvings=0"});
  EXPECT_EQ(solve(c, dir), 3);
  const nlohmann::json s = read_json(dir / "summary.json");
  EXPECT_EQ(s["status"], "failed");
  ASSERT_FALSE(s["failures"].empty());
  const std::string d = s["failures"][0];
  EXPECT_NE(d.find("V = 0 V"), std::string::npos) << d;
  EXPECT_NE(d.find("largest update per step (kT/q):"), std::string::npos) << d;
  EXPECT_NE(d.find("at x = "), std::string::npos) << d;
  for (const auto &[k, v] : s["metrics"].items())
    EXPECT_FALSE(v.is_number()) << k;
  EXPECT_TRUE(s["collection_efficiency"].is_null());
  // Every bias of the grid (0, 0.1, ..., 1.2 V) is listed, none converged.
  ASSERT_EQ(s["points"].size(), 13u);
  for (const auto &p : s["points"])
    {
      EXPECT_TRUE(p["current_mA_per_cm2"].is_null());
      EXPECT_EQ(p["status"], "not computed");
    }
  fs::remove_all(dir);
}

// A sweep that converges at short circuit and fails further out: the
// converged points are written, the failed bias is named with its update
// history, the metrics that need open circuit are null while Jsc (which
// needs only the points around 0 V) remains, and the exit code is 3. With
// the update limited to 1 kT/q per Newton step and no step halvings, the
// 0.8 V step from short circuit cannot converge in 34 steps.
TEST(Faults, FailedPointCutsTheCurve)
{
  const fs::path          dir = fresh_folder("cut");
  const simulator::Case c   = simulator::read_case(
    tiny_case, {"Numerics/Step halvings=0", "Numerics/Update limit=1", "Numerics/Newton iterations=34",
                "J-V scan/Voltage step=1", "J-V scan/Start voltage=-0.2"});
  EXPECT_EQ(solve(c, dir), 3);
  const nlohmann::json s = read_json(dir / "summary.json");
  EXPECT_EQ(s["status"], "failed");
  const std::string d = s["failures"][0];
  EXPECT_EQ(d.rfind("light: Newton did not converge at V = 0.8 V, light factor 1 after 34 steps", 0), 0u) << d;
  EXPECT_NE(d.find("gave up after 0 step halvings"), std::string::npos) << d;
  // Grid -0.2, 0, 0.8, 1.2 V.
  const std::vector<std::string> status{"converged", "converged", "failed", "not computed"};
  ASSERT_EQ(s["points"].size(), 4u);
  for (std::size_t i = 0; i < 4; ++i)
    {
      EXPECT_EQ(s["points"][i]["status"], status[i]) << i;
      EXPECT_EQ(s["points"][i]["current_mA_per_cm2"].is_number(), i < 2) << i;
    }
  // Every pair collected at short circuit (lifetimes far above the transit
  // time): Jsc = q G t = 1.602177e-19 C * 1e21 cm^-3 s^-1 * 0.4e-4 cm =
  // 6.40871 mA/cm^2 (analytic).
  EXPECT_NEAR(double(s["metrics"]["Jsc_mA_per_cm2"]), 6.40871, 1e-3 * 6.40871);
  for (const char *k : {"Voc_V", "FF", "Pmax_mW_per_cm2", "Vmp_V", "Jmp_mA_per_cm2", "PCE_percent"})
    EXPECT_TRUE(s["metrics"][k].is_null()) << k;
  EXPECT_TRUE(s["metrics"]["per_active_area"]["PCE_percent"].is_null());
  // jv.csv holds the converged points and marks the failed one.
  std::ifstream in(dir / "jv.csv");
  std::string   text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  EXPECT_NE(text.find("\n-0.2,6.40"), std::string::npos) << text;
  EXPECT_NE(text.find("\n0,6.40"), std::string::npos) << text;
  EXPECT_NE(text.find("\n0.8,failed,\n"), std::string::npos) << text;
  fs::remove_all(dir);
}

// A suns-Voc level that does not converge is named in the failures and
// makes the status partial (the J-V and its metrics stand; the series
// resistance from suns-Voc does not). With the update limited to 1 kT/q,
// no step halvings and 20 Newton steps, the open circuit at 1e-9 of the
// light (about 0.42 V, 0.6 V below the one at full light) is out of reach;
// with 30 steps it converges (checked by hand: 0.4175 V).
TEST(Faults, FailedSunsVocLevelMakesTheRunPartial)
{
  const fs::path        dir = fresh_folder("suns");
  const simulator::Case c   = simulator::read_case(
    tiny_case, {"J-V scan/Suns-Voc intensities=1e-9", "Numerics/Step halvings=0", "Numerics/Update limit=1",
                "Numerics/Newton iterations=20"});
  EXPECT_EQ(solve(c, dir), 0);
  const nlohmann::json s = read_json(dir / "summary.json");
  EXPECT_EQ(s["status"], "partial");
  ASSERT_FALSE(s["failures"].empty());
  const std::string d = s["failures"].back();
  EXPECT_EQ(d.rfind("suns-Voc at light factor 1e-09: Newton did not converge", 0), 0u) << d;
  EXPECT_TRUE(s["suns_voc"].empty());
  EXPECT_TRUE(s["metrics"]["Voc_V"].is_number());
  fs::remove_all(dir);
}

// sweep.csv carries a status per case, and the reason of a failed one.
TEST(Faults, SweepTableHasStatusPerCase)
{
  const fs::path         dir  = fresh_folder("sweep-status");
  study::StudyPlan plan = study::make_plan(tiny_case, {}, {"Numerics/Newton iterations=60,1"});
  study::StudyOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  EXPECT_EQ(study::run_study(plan, o), 3);
  std::ifstream            in(dir / "out" / "sweep.csv");
  std::vector<std::string> rows;
  for (std::string line; std::getline(in, line);)
    if (!line.empty() && line[0] != '#')
      rows.push_back(line);
  ASSERT_EQ(rows.size(), 3u);
  EXPECT_NE(rows[0].find(",status,reason"), std::string::npos) << rows[0];
  EXPECT_NE(rows[1].find(",converged,"), std::string::npos) << rows[1];
  EXPECT_EQ(rows[2].rfind("Newton_iterations=1,", 0), 0u) << rows[2];
  EXPECT_NE(rows[2].find(",failed,"), std::string::npos) << rows[2];
  EXPECT_NE(rows[2].find("equilibrium: Newton did not converge at V = 0 V"), std::string::npos) << rows[2];
  fs::remove_all(dir);
}

// Debye length L_D = sqrt(eps kT / (q^2 N)) (S. M. Sze, K. K. Ng, Physics
// of Semiconductor Devices, 3rd ed. 2007, Debye length). By hand with the
// CODATA 2018 constants, eps_r = 11.9, N = 1e16 cm^-3, 300 K:
// 11.9 * 8.8541878128e-12 F/m * 0.0258520 V / (1.602176634e-19 C * 1e22
// m^-3) = 1.70011e-15 m^2, L_D = 41.2325 nm (the textbook's "about 0.04 um
// for silicon at 1e16", from memory).
TEST(GuardRails, DebyeLength)
{
  EXPECT_NEAR(simulator::debye_length_um(11.9, 300, 1e16), 41.2325e-3, 1e-4 * 41.2325e-3);
  // L_D scales as N^(-1/2) and sqrt(eps T).
  EXPECT_NEAR(simulator::debye_length_um(11.9, 300, 4e16), 0.5 * 41.2325e-3, 1e-4 * 41.2325e-3);
}

// Diffusion length L = sqrt(D tau), D = mu kT/q (Einstein relation; Sze &
// Ng 2007, ch. 1, chapter from memory). By hand: mu = 1000 cm^2/Vs, 300 K:
// D = 25.8520 cm^2/s;
// tau = 1 us: L = sqrt(2.58520e-5) cm = 50.8449 um.
TEST(GuardRails, DiffusionLengthAndLifetime)
{
  EXPECT_NEAR(simulator::diffusion_length_um(1000, 300, 1e-6), 50.8449, 1e-4 * 50.8449);
  // Low-injection minority lifetime in p-type material (N_A = 1e17):
  // 1/tau_n = 1/tau_SRH + B (1 - recycling) N_A + C_p N_A^2
  //         = 1e6 + 1e-10 * 0.5 * 1e17 + 1e-30 * 1e34 = 6.01e6 /s (analytic).
  fem::Material m;
  m.acceptors        = 1e17;
  m.tau_n            = 1e-6;
  m.tau_p            = 2e-6;
  m.B_rad            = 1e-10;
  m.photon_recycling = 0.5;
  m.C_p              = 1e-30;
  m.C_n              = 5e-30;
  const auto [tau_n, tau_p] = simulator::minority_lifetimes(m);
  EXPECT_NEAR(tau_n, 1 / 6.01e6, 1e-12 / 6.01e6);
  // Holes are majority carriers here: only their SRH lifetime is left.
  EXPECT_DOUBLE_EQ(tau_p, 2e-6);
}

// The tiny strip resolves both lengths; a coarse contact cell or a short
// lifetime each trigger their warning with the numbers and the entry.
TEST(GuardRails, WarningsNameTheNumbersAndTheEntry)
{
  EXPECT_TRUE(warnings_of({}).empty());

  // Contact density at the electron contact: n0 = Nc exp(-(W - chi)/kT) =
  // 2e18 exp(-0.1 / 0.025852) = 4.1793e16 cm^-3 (the defaults of
  // Absorber), L_D (eps_r 25) = 29.234 nm by hand as above: a 40 nm first
  // cell cannot resolve it.
  {
    const simulator::Case  c = simulator::read_case(tiny_case, {"Mesh/Smallest cell=40"});
    dealii::Triangulation<2> tria;
    geometry::build_triangulation(c.geometry, c.mesh, tria);
    const auto f = simulator::guard_rail_figures(c, tria);
    ASSERT_EQ(f.contacts.size(), 2u);
    EXPECT_NEAR(f.contacts[0].density, 4.1793e16, 1e-4 * 4.1793e16);
    EXPECT_NEAR(f.contacts[0].debye_um, 29.234e-3, 1e-4 * 29.234e-3);
    EXPECT_NEAR(f.contacts[0].cell_um, 0.040, 1e-9);
    const auto w = simulator::guard_rail_warnings(c, tria);
    ASSERT_EQ(w.size(), 2u); // the hole contact mirrors the electron contact
    EXPECT_TRUE(any_contains(w, "Electron contact: the Debye length 29.2 nm")) << w[0];
    EXPECT_TRUE(any_contains(w, "smallest cell normal to the contact, 40 nm"));
    EXPECT_TRUE(any_contains(w, "set Mesh/Smallest cell to 29 nm or less"));
  }
  // tau = 1 ps, mu = 10: L = sqrt(0.25852 * 1e-12) cm = 5.08 nm, far below
  // the lateral cells of the strip (the whole strip counts as gap: its
  // widest cell, 0.118 um, the largest x side of the mesh statistics).
  {
    const simulator::Case c =
      simulator::read_case(tiny_case, {"Absorber/Recombination/SRH/Electron lifetime=1e-12", "Absorber/Recombination/SRH/Hole lifetime=1e-12"});
    dealii::Triangulation<2> tria;
    geometry::build_triangulation(c.geometry, c.mesh, tria);
    const auto f = simulator::guard_rail_figures(c, tria);
    EXPECT_NEAR(f.electron_diffusion_um, 5.0845e-3, 1e-4 * 5.0845e-3);
    EXPECT_DOUBLE_EQ(f.gap_cell_um, geometry::mesh_statistics(tria).max_x_size_um);
    const auto w = simulator::guard_rail_warnings(c, tria);
    ASSERT_EQ(w.size(), 1u);
    EXPECT_TRUE(any_contains(w, "Absorber: the electron diffusion length 0.00508 um")) << w[0];
    EXPECT_TRUE(any_contains(w, "lateral cell in the gap, 0.118 um"));
    EXPECT_TRUE(any_contains(w, "set Mesh/Largest lateral cell to 0.01 um or less"));
  }
  // A comb period: only the cells between the finger edges count.
  {
    const simulator::Case  c = simulator::read_case(
      tiny_case, {"Geometry/Layout=comb period", "Geometry/Gap=4", "Geometry/Electron finger width=2",
                  "Geometry/Hole finger width=2", "Mesh/Largest lateral cell=0.5"});
    dealii::Triangulation<2> tria;
    geometry::build_triangulation(c.geometry, c.mesh, tria);
    double widest = 0;
    for (const auto &cell : tria.active_cell_iterators())
      {
        const auto box = cell->bounding_box();
        if (box.lower_bound(0) >= 1.0 - 1e-9 && box.upper_bound(0) <= 5.0 + 1e-9)
          widest = std::max(widest, box.side_length(0));
      }
    const auto f = simulator::guard_rail_figures(c, tria);
    EXPECT_DOUBLE_EQ(f.gap_cell_um, widest);
    EXPECT_LE(f.gap_cell_um, 0.5 + 1e-12);
  }
}

// The warnings reach summary.json.
// Mobile ions: the ionic Debye length sqrt(eps kT / (q^2 z^2 N)) (Sze &
// Ng, Physics of Semiconductor Devices, 3rd ed. 2007) for 1e17 cm^-3 in
// eps_r 25 at 300 K is 18.899 nm by hand (CODATA constants), the ions'
// relaxation time L_D^2/D = 3.5717 s and their time to cross the 1 um
// strip L_D W/D = 188.99 s for D = 1e-12 cm^2/s. The strip's 20 nm cells
// at the contacts miss the ion layers; a 1e6 V/s scan (1.2 us in all) is
// far faster than 3.57 s / 100, one 0.1 V step at 1e-6 V/s (1e5 s) far
// slower than 100 x 189 s, and 1 V/s neither.
TEST(GuardRails, IonicDebyeLengthAndScanRateLimits)
{
  const std::vector<std::string> ions = {"Absorber/Mobile ions/Density=1e17",
                                         "Absorber/Mobile ions/Diffusion coefficient=1e-12"};
  {
    const simulator::Case  c = simulator::read_case(tiny_case, ions);
    dealii::Triangulation<2> tria;
    geometry::build_triangulation(c.geometry, c.mesh, tria);
    const auto f = simulator::guard_rail_figures(c, tria);
    EXPECT_NEAR(f.ion_debye_um, 18.899e-3, 1e-4 * 18.899e-3);
    EXPECT_NEAR(f.ion_relaxation_s, 3.5717, 1e-4 * 3.5717);
    EXPECT_NEAR(f.ion_gap_s, 188.99, 1e-4 * 188.99);
    EXPECT_NEAR(f.ion_cell_um, 0.020, 1e-9);
    const auto w = simulator::guard_rail_warnings(c, tria);
    ASSERT_EQ(w.size(), 1u);
    EXPECT_TRUE(any_contains(w, "Absorber/Mobile ions: the ionic Debye length 18.9 nm")) << w[0];
    EXPECT_TRUE(any_contains(w, "set Mesh/Smallest cell to 19 nm or less"));
  }
  auto scan = [&](const std::string &rate) {
    std::vector<std::string> o = ions;
    o.push_back("Mesh/Smallest cell=10");
    o.push_back("Hysteresis scan/Scan rate=" + rate);
    return warnings_of(o);
  };
  EXPECT_TRUE(scan("1").empty());
  const auto fast = scan("1e6"), slow = scan("1e-6");
  ASSERT_EQ(fast.size(), 1u);
  EXPECT_TRUE(any_contains(fast, "the whole scan (1.2e-06 s) is shorter than 1/100 of the ions' relaxation time"))
    << fast[0];
  ASSERT_EQ(slow.size(), 1u);
  EXPECT_TRUE(any_contains(slow, "one bias step (1e+05 s) is longer than 100 times")) << slow[0];
}

TEST(GuardRails, WarningsInSummary)
{
  const fs::path          dir = fresh_folder("warnings");
  const simulator::Case c   = simulator::read_case(tiny_case, {"Mesh/Smallest cell=40"});
  EXPECT_EQ(solve(c, dir), 0);
  const nlohmann::json s = read_json(dir / "summary.json");
  ASSERT_EQ(s["warnings"].size(), 2u);
  EXPECT_NE(s["warnings"][0].get<std::string>().find("Debye length"), std::string::npos);
  fs::remove_all(dir);
}

// Chord steps (a Newton step with the factorisation of an earlier
// Jacobian) change the path to each point, not the point: the short-film case (the first demo) at
// a 10 um gap with and without them gives the same metrics, collection
// efficiency and J-V currents to the Newton tolerance (1e-6 relative is far
// above the 1e-9 kT/q of the potentials), with less than half the
// factorisations. The reference is plain Newton (a fresh Jacobian every
// step, converging quadratically), the textbook method the chord steps
// approximate (C. T. Kelley, Solving Nonlinear Equations with Newton's
// Method, SIAM 2003, ch. 2.3 on the chord method).
TEST(Speed, ChordStepsGiveTheNewtonResult)
{
  const fs::path dir = fresh_folder("chord");
  const std::string demo = std::string(BACKCOMB_SOURCE_DIR) + "/cases/short-film.prm";
  const std::vector<std::string> common{"Geometry/Gap=10", "J-V scan/Dark scan=false", "J-V scan/Voltage step=0.05",
                                        "Output/Write fields=false", "J-V scan/Suns-Voc intensities=1, 0.1"};
  auto with = [&](const char *reuse) {
    std::vector<std::string> o = common;
    o.push_back(std::string("Numerics/Reuse factorisations=") + reuse);
    return simulator::read_case(demo, o);
  };
  ASSERT_EQ(solve(with("true"), dir / "chord"), 0);
  ASSERT_EQ(solve(with("false"), dir / "newton"), 0);
  const nlohmann::json a = read_json(dir / "chord" / "summary.json"), b = read_json(dir / "newton" / "summary.json");
  for (const char *k : {"Jsc_mA_per_cm2", "Voc_V", "FF", "PCE_percent"})
    EXPECT_NEAR(double(a["metrics"][k]), double(b["metrics"][k]), 1e-6 * std::abs(double(b["metrics"][k]))) << k;
  EXPECT_NEAR(double(a["collection_efficiency"]), double(b["collection_efficiency"]), 1e-6);
  const double jsc = b["metrics"]["Jsc_mA_per_cm2"];
  // The scanned grid (the refinement points may differ in bias).
  for (const auto &p : b["points"])
    for (const auto &q : a["points"])
      if (q["sweep"] == p["sweep"] && std::abs(double(q["voltage_V"]) - double(p["voltage_V"])) < 1e-12 &&
          p["current_mA_per_cm2"].is_number())
        {
          EXPECT_NEAR(double(q["current_mA_per_cm2"]), double(p["current_mA_per_cm2"]), 1e-6 * jsc) << p.dump();
        }
  EXPECT_LT(2 * double(a["newton"]["factorisations"]), double(b["newton"]["factorisations"]));
  fs::remove_all(dir);
}
