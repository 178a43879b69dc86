// The calibration run: measured-data files (units, sign convention, bad
// data), and fits to data the tool generated itself from known entries
// (recovery without noise, coverage of the reported standard errors with
// noise, an entry the data do not depend on, resume from the evaluations).
#include "base/errors.h"
#include "fem/constants.h"
#include "fem/optics.h"
#include "simulator/case_setup.h"
#include "simulator/case_file.h"
#include "simulator/device_response.h"
#include "study/calibration.h"
#include "study/measured.h"
#include "temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

using namespace backcomb;
using namespace backcomb::study;
namespace fs = std::filesystem;

namespace
{
  const std::string tiny = BACKCOMB_TEST_SOURCE_DIR "/calibration_tiny.prm";

  std::string
  write(const fs::path &file, const std::string &text)
  {
    std::ofstream(file) << text;
    return file.string();
  }

  // A data file: header lines, then the points.
  std::string
  data_file(const fs::path &file, const std::string &header, const std::vector<double> &x,
            const std::vector<double> &y)
  {
    std::ostringstream s;
    s.precision(17);
    s << header << "data\n";
    for (std::size_t i = 0; i < x.size(); ++i)
      s << x[i] << "  " << y[i] << "\n";
    return write(file, s.str());
  }

  // What the model gives for the tiny case with `overrides` (the truth of
  // the synthetic data).
  simulator::DeviceResponse
  truth(const std::vector<std::string> &overrides, const simulator::ResponseRequest &r, const fs::path &scratch)
  {
    const simulator::Case c = simulator::read_case(tiny, overrides);
    const auto            d = simulator::device_response(c, r, scratch.string(), MPI_COMM_SELF);
    for (const auto &f : d.failures)
      ADD_FAILURE() << f;
    return d;
  }

  nlohmann::json
  read_json(const fs::path &p)
  {
    std::ifstream in(p);
    return nlohmann::json::parse(in);
  }

  std::string
  error_of(const std::function<void()> &f)
  {
    try
      {
        f();
      }
    catch (const InputError &e)
      {
        return e.what();
      }
    return "(no error)";
  }

  const std::vector<double> biases{0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1};
} // namespace

TEST(MeasuredData, ConvertsUnitsSignAndOrder)
{
  const auto dir = test_support::fresh_folder("measured-units");
  const auto f   = data_file(dir / "a.dat",
                           "# a reverse scan in mV and A/m2, load convention\n"
                           "kind = light J-V\ncolumns = mV, A/m2\ncurrent sign = generated negative\n"
                           "device = Geometry/Gap=4\nsigma = 1.5\nlabel = cell A\n",
                           {1000, 500, 0}, {20, -120, -150});
  const MeasuredSet s = read_measured(f);
  EXPECT_EQ(s.label, "cell A");
  ASSERT_EQ(s.x.size(), 3u);
  // 1 A/m2 = 0.1 mA/cm2; generated current positive; sorted by voltage.
  EXPECT_DOUBLE_EQ(s.x[0], 0.0);
  EXPECT_DOUBLE_EQ(s.x[2], 1.0);
  EXPECT_DOUBLE_EQ(s.y[0], 15.0);
  EXPECT_DOUBLE_EQ(s.y[2], -2.0);
  EXPECT_DOUBLE_EQ(*s.sigma, 0.15);
  EXPECT_EQ(s.line[0], 11u); // the point at 0 V is the last line
  EXPECT_EQ(s.device, std::vector<std::string>{"Geometry/Gap=4"});
}

TEST(MeasuredData, BadDataGetsAClearError)
{
  const auto  dir  = test_support::fresh_folder("measured-bad");
  const auto  jv   = std::string("kind = light J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n");
  const auto  read = [&](const std::string &name, const std::string &text) {
    const auto f = write(dir / name, text);
    return error_of([&] { read_measured(f); });
  };
  EXPECT_NE(read("nonmono.dat", jv + "data\n0 20\n0.2 19\n0.1 18\n").find("nonmono.dat:7"), std::string::npos);
  EXPECT_NE(read("nonmono.dat", jv + "data\n0 20\n0.2 19\n0.1 18\n").find("not monotone"), std::string::npos);
  EXPECT_NE(read("dup.dat", jv + "data\n0 20\n0.1 19\n0.1 18\n").find("duplicate"), std::string::npos);
  EXPECT_NE(read("nan.dat", jv + "data\n0 20\n0.1 nan\n").find("nan.dat:6"), std::string::npos);
  EXPECT_NE(read("nan.dat", jv + "data\n0 20\n0.1 nan\n").find("NaN"), std::string::npos);
  EXPECT_NE(read("text.dat", jv + "data\n0 20\n0.1 1O\n").find("not a number"), std::string::npos);
  // Load convention declared as generated positive: a likely sign flip.
  const std::string flipped = read("flip.dat", jv + "data\n0 -20\n0.5 -15\n1.0 3\n");
  EXPECT_NE(flipped.find("sign looks flipped"), std::string::npos) << flipped;
  EXPECT_NE(flipped.find("generated negative"), std::string::npos) << flipped;
  const std::string dark = read("dark.dat", "kind = dark J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n"
                                            "data\n0 0\n0.5 1e-3\n1.0 30\n");
  EXPECT_NE(dark.find("sign looks flipped"), std::string::npos) << dark;
  EXPECT_NE(read("nounits.dat", "kind = light J-V\ncurrent sign = generated positive\ndata\n0 1\n1 0\n")
              .find("units missing"),
            std::string::npos);
  EXPECT_NE(read("badunit.dat", "kind = light J-V\ncolumns = V, mA\ncurrent sign = generated positive\ndata\n0 1\n1 0\n")
              .find("unknown unit 'mA'"),
            std::string::npos);
  EXPECT_NE(read("nosign.dat", "kind = light J-V\ncolumns = V, mA/cm2\ndata\n0 1\n1 0\n").find("sign convention"),
            std::string::npos);
  EXPECT_NE(read("percent.dat", "kind = EQE\ncolumns = nm, fraction\ndata\n400 80\n500 85\n").find("percent"),
            std::string::npos);
  EXPECT_NE(read("one.dat", jv + "data\n0 20\n").find("at least 2"), std::string::npos);
  EXPECT_NE(read("key.dat", jv + "gap = 4\ndata\n0 20\n1 0\n").find("unknown header key"), std::string::npos);
  EXPECT_NE(read("voc.dat", "kind = Voc vs light\ncolumns = suns, V\ndata\n0.1 -1.0\n1 -1.1\n").find("sign"),
            std::string::npos);
  EXPECT_NE(error_of([&] { read_measured((dir / "missing.dat").string()); }).find("missing.dat"), std::string::npos);
}

TEST(Calibration, RefusesBadSetUps)
{
  const auto dir  = test_support::fresh_folder("calibration-setup");
  const auto good = data_file(dir / "good.dat",
                              "kind = light J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n"
                              "device = Geometry/Gap=4\n",
                              {0, 0.5, 1.0}, {16, 13, 5});
  auto run = [&](const std::vector<std::string> &data, const std::vector<std::string> &fit,
                 const std::vector<std::string> &sets = {}) {
    CalibrationOptions o;
    o.case_file  = tiny;
    o.data_files = data;
    o.fit        = fit;
    o.sets       = sets;
    o.folder     = (dir / "out").string();
    o.quiet      = true;
    return error_of([&] { run_calibration(o, MPI_COMM_SELF); });
  };
  const std::string mu = "Absorber/Transport/Electron mobility=0.1:10";
  // Fewer points than fitted entries.
  const auto two = data_file(dir / "two.dat",
                             "kind = light J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n", {0, 1},
                             {16, 5});
  EXPECT_NE(run({two}, {mu, "Absorber/Transport/Hole mobility=0.1:10"}).find("more points than entries"),
            std::string::npos);
  // A device whose overrides are not a valid case.
  const auto bad_gap = data_file(dir / "badgap.dat",
                                 "kind = light J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n"
                                 "device = Geometry/Gap=-1\n",
                                 {0, 0.5, 1.0}, {16, 13, 5});
  const std::string gap_error = run({bad_gap}, {mu});
  EXPECT_NE(gap_error.find("badgap.dat"), std::string::npos) << gap_error;
  EXPECT_NE(gap_error.find("Geometry/Gap"), std::string::npos) << gap_error;
  EXPECT_NE(run({good}, {"Absorber/Transport/Electron mobility=2:10"}).find("outside the bounds"), std::string::npos);
  EXPECT_NE(run({good}, {"Illumination/Generation model=0:1"}).find("not a numeric entry"), std::string::npos);
  EXPECT_NE(run({good}, {"Absorber/Transport/Electron mobilty=0.1:10"}).find("Electron mobility"),
            std::string::npos);
  EXPECT_NE(run({good}, {"Geometry/Gap=1:10"}).find("sets a fitted entry"), std::string::npos);
  EXPECT_NE(run({good}, {"Absorber/Transport/Electron mobility=-1:10:log"}).find("bounds > 0"), std::string::npos);
  EXPECT_NE(run({}, {mu}).find("no --data"), std::string::npos);
  // Nothing was solved, so no result was written.
  EXPECT_FALSE(fs::exists(dir / "out" / "fit.json"));
}

namespace
{
  const std::string light_header = "kind = light J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n";

  // Light J-V data of the tiny case at `gap` from the `truth_sets` entries.
  std::string
  light_data(const fs::path &dir, const double gap, const std::vector<std::string> &truth_sets,
             const std::string &extra_header = "", const std::vector<double> &noise = {})
  {
    simulator::ResponseRequest r;
    r.light_biases = biases;
    std::vector<std::string> ov = truth_sets;
    ov.push_back("Geometry/Gap=" + std::to_string(gap));
    auto j = truth(ov, r, dir).light_current;
    for (std::size_t i = 0; i < noise.size() && i < j.size(); ++i)
      j[i] += noise[i];
    for (const double v : j)
      EXPECT_TRUE(std::isfinite(v));
    return data_file(dir / ("light-gap" + std::to_string(int(gap)) + ".dat"),
                     light_header + extra_header + "device = Geometry/Gap=" + std::to_string(gap) + "\n", biases, j);
  }

  CalibrationOptions
  options(const fs::path &dir, const std::vector<std::string> &data, const std::vector<std::string> &fitted,
          const std::vector<std::string> &sets, const std::string &out = "out")
  {
    CalibrationOptions o;
    o.case_file  = tiny;
    o.data_files = data;
    o.fit        = fitted;
    o.sets       = sets;
    o.folder     = (dir / out).string();
    o.quiet      = true;
    return o;
  }

  nlohmann::json
  fit(const fs::path &dir, const std::vector<std::string> &data, const std::vector<std::string> &fitted,
      const std::vector<std::string> &sets, const std::string &out = "out")
  {
    EXPECT_EQ(run_calibration(options(dir, data, fitted, sets, out), MPI_COMM_SELF), 0);
    return read_json(dir / out / "fit.json");
  }

  double
  value_of(const nlohmann::json &f, const std::string &entry, const char *key = "value")
  {
    for (const auto &e : f["entries"])
      if (e["entry"] == entry)
        return e[key].is_null() ? std::nan("") : e[key].get<double>();
    ADD_FAILURE() << "no entry " << entry;
    return std::nan("");
  }
} // namespace

// Data generated by the tool itself from known entries at three gaps
// (light J-V), with a dark J-V and V_oc at three light levels of the
// middle gap: four entries spanning six decades, started a factor 3 to 10
// away, come back to 1e-3 (the independent reference is the truth the
// data were made from).
TEST(Calibration, RecoversFourEntriesFromNoiseFreeData)
{
  const auto dir = test_support::fresh_folder("calibration-recover");
  const std::vector<std::string> truth_sets{
    "Absorber/Transport/Electron mobility=1", "Absorber/Transport/Hole mobility=0.5",
    "Absorber/Recombination/SRH/Electron lifetime=1e-7", "Gap interface/Electron recombination velocity=300"};
  std::vector<std::string> data;
  for (const double gap : {2.0, 4.0, 8.0})
    data.push_back(light_data(dir, gap, truth_sets));
  simulator::ResponseRequest r;
  r.dark_biases       = {0.6, 0.7, 0.8, 0.9, 1.0, 1.1};
  r.voc_light_factors = {0.1, 0.3, 1.0};
  std::vector<std::string> ov = truth_sets;
  ov.push_back("Geometry/Gap=4");
  const auto t = truth(ov, r, dir);
  data.push_back(data_file(dir / "dark.dat",
                           "kind = dark J-V\ncolumns = V, mA/cm2\ncurrent sign = generated positive\n"
                           "device = Geometry/Gap=4\n",
                           r.dark_biases, t.dark_current));
  data.push_back(data_file(dir / "voc.dat", "kind = Voc vs light\ncolumns = suns, V\ndevice = Geometry/Gap=4\n",
                           r.voc_light_factors, t.voc));
  const auto f = fit(dir, data,
                     {"Absorber/Transport/Electron mobility=0.01:100", "Absorber/Transport/Hole mobility=0.01:100",
                      "Absorber/Recombination/SRH/Electron lifetime=1e-10:1e-4",
                      "Gap interface/Electron recombination velocity=1:1e6"},
                     {"Absorber/Transport/Electron mobility=3", "Absorber/Transport/Hole mobility=0.1",
                      "Absorber/Recombination/SRH/Electron lifetime=1e-6",
                      "Gap interface/Electron recombination velocity=3000"});
  EXPECT_EQ(f["status"], "converged") << f["reason"];
  EXPECT_NEAR(value_of(f, "Absorber/Transport/Electron mobility"), 1.0, 1e-3);
  EXPECT_NEAR(value_of(f, "Absorber/Transport/Hole mobility") / 0.5, 1.0, 1e-3);
  EXPECT_NEAR(value_of(f, "Absorber/Recombination/SRH/Electron lifetime") / 1e-7, 1.0, 1e-3);
  EXPECT_NEAR(value_of(f, "Gap interface/Electron recombination velocity") / 300, 1.0, 1e-3);
  EXPECT_LT(f["cost"].get<double>(), 1e-6 * f["cost_start"].get<double>());
  std::printf("recovery: %d iterations, %d solves, cost %.3g -> %.3g\n", f["iterations"].get<int>(),
              f["solves"].get<int>(), f["cost_start"].get<double>(), f["cost"].get<double>());
  // The fitted case reads and carries the fitted values.
  const simulator::Case c = simulator::read_case((dir / "out" / "fitted.prm").string(), {});
  EXPECT_NEAR(c.absorber.mu_n / 1.0, 1.0, 1e-3);
  for (const char *file : {"fit-1.svg", "fit-1.png", "fit-5.svg", "fit-points.csv"})
    EXPECT_TRUE(fs::exists(dir / "out" / file)) << file;
}

// An entry the data do not depend on (the finger length only enters the
// whole comb cell, not the period's J-V) is reported as not identifiable,
// with no standard error, beside a well-determined one.
TEST(Calibration, ReportsAnEntryTheDataDoNotDependOn)
{
  const auto dir  = test_support::fresh_folder("calibration-unidentifiable");
  const auto data = light_data(dir, 4.0, {"Absorber/Transport/Electron mobility=1"});
  const auto f    = fit(dir, {data}, {"Absorber/Transport/Electron mobility=0.1:10", "Electrodes/Finger length=1:10"},
                        {"Absorber/Transport/Electron mobility=2"});
  EXPECT_NEAR(value_of(f, "Absorber/Transport/Electron mobility"), 1.0, 1e-3);
  bool flagged = false;
  for (const auto &e : f["entries"])
    if (e["entry"] == "Electrodes/Finger length")
      {
        EXPECT_FALSE(e["identifiable"].get<bool>());
        EXPECT_TRUE(e["standard_error"].is_null());
        flagged = true;
      }
    else
      EXPECT_TRUE(e["identifiable"].get<bool>());
  EXPECT_TRUE(flagged);
  const std::string warnings = f["warnings"].dump();
  EXPECT_NE(warnings.find("Electrodes/Finger length: not identifiable"), std::string::npos) << warnings;
}

// A fit run again replays its evaluations without a solve; a fit whose
// evaluations file was cut in the middle of a line (a kill) goes on from
// the intact ones to the same values.
TEST(Calibration, ResumesFromItsEvaluations)
{
  const auto dir  = test_support::fresh_folder("calibration-resume");
  const auto data = light_data(dir, 4.0, {"Absorber/Transport/Electron mobility=1"});
  const std::vector<std::string> fitted{"Absorber/Transport/Electron mobility=0.1:10"};
  const std::vector<std::string> sets{"Absorber/Transport/Electron mobility=5"};
  const auto first = fit(dir, {data}, fitted, sets);
  const auto again = fit(dir, {data}, fitted, sets);
  EXPECT_EQ(again["solves"].get<int>(), 0);
  EXPECT_EQ(value_of(again, "Absorber/Transport/Electron mobility"),
            value_of(first, "Absorber/Transport/Electron mobility"));
  // Keep the header and half of the evaluations, then half a line.
  const fs::path     log = dir / "out" / "evaluations.jsonl";
  std::ifstream      in(log);
  std::vector<std::string> lines;
  for (std::string l; std::getline(in, l);)
    lines.push_back(l);
  in.close();
  ASSERT_GT(lines.size(), 4u);
  std::ofstream out(log, std::ios::trunc);
  const std::size_t keep = 1 + (lines.size() - 1) / 2;
  for (std::size_t i = 0; i < keep; ++i)
    out << lines[i] << "\n";
  out << lines[keep].substr(0, lines[keep].size() / 2);
  out.close();
  const auto resumed = fit(dir, {data}, fitted, sets);
  EXPECT_GT(resumed["evaluations_replayed"].get<int>(), 0);
  EXPECT_LT(resumed["solves"].get<int>(), first["solves"].get<int>());
  // The resumed solves start from other first guesses (the first run's
  // states are gone): the same values to the Newton tolerance.
  EXPECT_NEAR(value_of(resumed, "Absorber/Transport/Electron mobility"),
              value_of(first, "Absorber/Transport/Electron mobility"), 1e-7);
  // A different data set in the same folder is refused.
  const auto other = light_data(dir, 2.0, {"Absorber/Transport/Electron mobility=1"});
  const CalibrationOptions o = options(dir, {other}, fitted, sets);
  EXPECT_NE(error_of([&] { run_calibration(o, MPI_COMM_SELF); }).find("different calibration"), std::string::npos);
}

// Coverage of the reported uncertainty: Gaussian noise of known sigma
// (declared in the data files) on light J-V at two gaps; in at least 8 of
// 10 replicates each fitted entry lies within two of its standard errors
// of the truth (for a linearised Gaussian model 95 % would; the binomial
// chance of fewer than 8 of 10 at p = 0.95 is 1.2 %).
TEST(Calibration, NoisyFitsCoverTheTruth)
{
  const auto dir = test_support::fresh_folder("calibration-coverage");
  const std::vector<std::string> truth_sets{"Absorber/Transport/Electron mobility=1",
                                            "Absorber/Recombination/SRH/Electron lifetime=1e-7"};
  const double sigma = 0.05; // mA/cm^2
  std::mt19937 rng(20261202);
  std::normal_distribution<double> noise(0.0, sigma);
  int covered_mu = 0, covered_tau = 0;
  for (int k = 0; k < 10; ++k)
    {
      const auto rep = dir / ("rep" + std::to_string(k));
      fs::create_directories(rep);
      std::vector<std::string> data;
      for (const double gap : {2.0, 6.0})
        {
          std::vector<double> e(biases.size());
          for (double &x : e)
            x = noise(rng);
          data.push_back(light_data(rep, gap, truth_sets, "sigma = 0.05\n", e));
        }
      const auto f = fit(rep, data,
                         {"Absorber/Transport/Electron mobility=0.1:10",
                          "Absorber/Recombination/SRH/Electron lifetime=1e-9:1e-5"},
                         {"Absorber/Transport/Electron mobility=2"});
      const double mu = value_of(f, "Absorber/Transport/Electron mobility"),
                   smu = value_of(f, "Absorber/Transport/Electron mobility", "standard_error");
      const double tau  = value_of(f, "Absorber/Recombination/SRH/Electron lifetime"),
                   stau = value_of(f, "Absorber/Recombination/SRH/Electron lifetime", "standard_error");
      std::printf("replicate %d: mobility %.5f +- %.5f, lifetime %.5g +- %.3g\n", k, mu, smu, tau, stau);
      covered_mu += std::abs(mu - 1.0) <= 2 * smu;
      covered_tau += std::abs(tau - 1e-7) <= 2 * stau;
    }
  EXPECT_GE(covered_mu, 8);
  EXPECT_GE(covered_tau, 8);
}

// The EQE a calibration compares with a measured spectrum: integrated
// over the incident photon flux it gives the short-circuit current it
// comes from, q int EQE Phi dl = J_sc (the collection probability is dJ/dG,
// C. Donolato, Appl. Phys. Lett. 46 (1985) 270; equality holds where the
// cell responds linearly to light: here at 0.01 sun, within 0.5 %), and the
// measured-data path interpolates it between the optical model's
// wavelengths.
TEST(DeviceResponse, EqeIntegratesToTheShortCircuitCurrent)
{
  const auto dir = test_support::fresh_folder("response-eqe");
  const std::vector<std::string> spectral{"Illumination/Generation model=spectrum", "Geometry/Gap=4",
                                         "Illumination/Intensity=0.01"};
  const simulator::Case c = simulator::read_case(tiny, spectral);
  const fem::Generation g(c.illumination, c.absorber.band_gap, c.geometry.absorber_thickness_um,
                          simulator::finger_layout(c));
  simulator::ResponseRequest r;
  r.light_biases       = {0.0};
  r.eqe_wavelengths_nm = g.wavelengths_nm();
  const auto d         = truth(spectral, r, dir);
  std::vector<double> y(d.eqe.size());
  for (std::size_t i = 0; i < y.size(); ++i)
    y[i] = d.eqe[i] * g.incident_photon_flux()[i];
  const double integrated = 1e3 * constants::q * fem::integrate_trapezoid(g.wavelengths_nm(), y);
  std::printf("q int EQE Phi = %.5f mA/cm2, J_sc = %.5f mA/cm2\n", integrated, d.light_current[0]);
  EXPECT_NEAR(integrated / d.light_current[0], 1.0, 5e-3);
  // Between two wavelengths of the model: the linear interpolation.
  const std::size_t k = g.wavelengths_nm().size() / 2;
  const double      mid = 0.5 * (g.wavelengths_nm()[k] + g.wavelengths_nm()[k + 1]);
  simulator::ResponseRequest between;
  between.eqe_wavelengths_nm = {mid};
  const auto b               = truth(spectral, between, dir);
  EXPECT_NEAR(b.eqe[0], 0.5 * (d.eqe[k] + d.eqe[k + 1]), 1e-6);
  // Outside the model's wavelengths: an input error.
  between.eqe_wavelengths_nm = {g.wavelengths_nm().back() + 50};
  EXPECT_NE(error_of([&] { truth(spectral, between, dir); }).find("outside the optical model"), std::string::npos);
}

// One outlier among noise-free points (a contact glitch of +3 mA/cm^2 at
// 0.5 V): plain least squares is pulled away from the truth, the Cauchy
// loss (scale 3 sigma) keeps the fit on it. A truth beyond the upper bound
// ends at the bound, with a warning.
TEST(Calibration, RobustLossResistsAnOutlierAndBoundsAreReported)
{
  const auto dir  = test_support::fresh_folder("calibration-robust");
  const std::vector<std::string> truth_sets{"Absorber/Transport/Electron mobility=1"};
  std::vector<double> glitch(biases.size(), 0.0);
  glitch[5] = 3.0;
  const auto data = light_data(dir, 4.0, truth_sets, "sigma = 0.05\n", glitch);
  const std::vector<std::string> fitted{"Absorber/Transport/Electron mobility=0.1:10"};
  const std::vector<std::string> start{"Absorber/Transport/Electron mobility=2"};
  const double plain = value_of(fit(dir, {data}, fitted, start, "plain"), "Absorber/Transport/Electron mobility");
  CalibrationOptions o = options(dir, {data}, fitted, start, "cauchy");
  parse_loss("cauchy:3", o);
  EXPECT_EQ(run_calibration(o, MPI_COMM_SELF), 0);
  const auto   f      = read_json(dir / "cauchy" / "fit.json");
  const double robust = value_of(f, "Absorber/Transport/Electron mobility");
  std::printf("mobility with an outlier: plain least squares %.5f, Cauchy loss %.5f (truth 1)\n", plain, robust);
  EXPECT_GT(std::abs(plain - 1.0), 1e-2);
  EXPECT_LT(std::abs(robust - 1.0), 0.1 * std::abs(plain - 1.0));
  EXPECT_EQ(f["loss"]["kind"], "cauchy");

  const auto bounded = fit(dir, {data}, {"Absorber/Transport/Electron mobility=0.1:0.5"},
                           {"Absorber/Transport/Electron mobility=0.3"}, "bounded");
  bool at_bound = false;
  for (const auto &e : bounded["entries"])
    at_bound = e["at_bound"].get<bool>();
  EXPECT_TRUE(at_bound);
  EXPECT_NEAR(value_of(bounded, "Absorber/Transport/Electron mobility"), 0.5, 1e-6);
  EXPECT_NE(bounded["warnings"].dump().find("at its upper bound"), std::string::npos);
}
