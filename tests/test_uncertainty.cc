// Uncertain entries of a sweep: the distributions' quantiles through the
// Sobol' and Latin-hypercube samplers, the bands of an analytic collection
// model, the correlated normal of a calibration's fit.json, the
// first-order sensitivity indices, the recommendation over samples with
// zero uncertainty, and the plan of a sampled sweep. No solver runs here
// (quick), except the sweep of tests/sweep_tiny.prm (slow).
#include "base/errors.h"
#include "study/study.h"
#include "temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <numeric>

using namespace backcomb;
using namespace backcomb::study;
namespace fs = std::filesystem;

namespace
{
  // The samples of one --uncertain entry.
  std::vector<double>
  draw(const std::string &distribution, const std::size_t n, const std::string &sampling = "sobol")
  {
    UncertaintyArguments a;
    a.uncertain = {"Absorber/Thickness=" + distribution};
    a.samples   = std::to_string(n);
    a.sampling  = sampling;
    std::vector<double> v;
    for (const auto &s : make_samples(a).values)
      v.push_back(s.at(0));
    return v;
  }

  // Collection efficiency of minority carriers generated uniformly between
  // two absorbing contacts a gap g apart, with diffusion length L: the
  // steady-state diffusion equation with zero density at both contacts,
  // averaged over the gap, gives (2L/g) tanh(g/(2L)) (S. M. Sze and K. K.
  // Ng, Physics of Semiconductor Devices, 3rd ed. 2007, sec. 2.4.2,
  // minority-carrier diffusion; the averaged form is worked out from there).
  // Increasing in L at every g.
  double
  collection(const double L, const double g)
  {
    return 2 * L / g * std::tanh(g / (2 * L));
  }

  // A plan of synthetic rows: Geometry/Gap over `gaps`, `samples` samples
  // of one uncertain entry with the given values; no case file.
  StudyPlan
  synthetic_plan(const std::vector<std::string> &gaps, const std::vector<double> &sample_values)
  {
    StudyPlan plan;
    plan.case_file = "synthetic";
    plan.entries   = {{"Geometry/Gap", gaps, "um"}};
    plan.samples.entries = {{"Absorber/Electron diffusion length", "um", "synthetic"}};
    plan.samples.count   = sample_values.size();
    for (const double v : sample_values)
      plan.samples.values.push_back({v});
    for (std::size_t s = 0; s < sample_values.size(); ++s)
      for (const auto &g : gaps)
        {
          StudyCase c;
          c.id     = "Gap=" + g + "__sample=" + std::to_string(s);
          c.values = {g};
          c.sample = s;
          c.gap_um = std::stod(g);
          plan.cases.push_back(c);
        }
    return plan;
  }

  // Rows of a synthetic plan: converged, with the given PCE and collection
  // efficiency per case (sample-major, as the plan).
  std::vector<StudyRow>
  synthetic_rows(const StudyPlan &plan, const std::function<double(std::size_t sample, double gap)> &pce,
                 const std::function<double(std::size_t sample, double gap)> &eta)
  {
    std::vector<StudyRow> rows;
    for (const auto &c : plan.cases)
      {
        StudyRow r;
        r.id                    = c.id;
        r.values                = c.values;
        r.sample                = c.sample;
        r.gap_um                = c.gap_um;
        r.status                = Status::converged;
        r.PCE                   = pce(*c.sample, c.gap_um);
        r.collection_efficiency = eta(*c.sample, c.gap_um);
        rows.push_back(r);
      }
    return rows;
  }

  // The plain rows of the same grid (no samples), for the recommendation
  // of today.
  std::pair<StudyPlan, std::vector<StudyRow>>
  unsampled(const StudyPlan &sampled, const std::vector<StudyRow> &rows)
  {
    StudyPlan plain = sampled;
    plain.samples   = {};
    const std::size_t grid = grid_size(sampled);
    plain.cases.resize(grid);
    std::vector<StudyRow> first(rows.begin(), rows.begin() + long(grid));
    for (auto &r : first)
      r.sample.reset();
    return {plain, first};
  }

  void
  write_fit(const fs::path &folder, const std::string &status, const bool identifiable, const double correlation)
  {
    using json = nlohmann::json;
    const json fit = {
      {"status", status},
      {"reason", status == "converged" ? "converged" : "stopped without convergence"},
      {"entries",
       {{{"entry", "Absorber/Thickness"},
         {"value", 0.5},
         {"scaling", "linear"},
         {"identifiable", true},
         {"standard_error", 0.05}},
        {{"entry", "Absorber/Recombination/SRH/Electron lifetime"},
         {"value", 1e-6},
         {"scaling", "log"},
         {"identifiable", identifiable},
         {"standard_error", identifiable ? json(0.4e-6) : json(nullptr)},
         {"one_sigma_factor", 1.5}}}},
      {"correlation", {{1.0, correlation}, {correlation, 1.0}}}};
    std::ofstream(folder / "fit.json") << fit.dump(2);
  }

  double
  mean_of(const std::vector<double> &v)
  {
    return std::accumulate(v.begin(), v.end(), 0.0) / double(v.size());
  }

  double
  sd_of(const std::vector<double> &v)
  {
    const double m = mean_of(v);
    double       s = 0;
    for (const double x : v)
      s += (x - m) * (x - m);
    return std::sqrt(s / double(v.size() - 1));
  }
} // namespace

// Type 7 sample quantiles on a small set worked by hand from the definition
// (R. J. Hyndman and Y. Fan, The American Statistician 50 (1996) 361-365,
// definition 7: h = (n - 1) p, linear between the order statistics).
TEST(Uncertainty, SampleQuantileIsHyndmanFanType7)
{
  const std::vector<double> x = {7, 1, 3, 5}; // sorted 1 3 5 7
  EXPECT_DOUBLE_EQ(sample_quantile(x, 0.5), 4);    // h = 1.5
  EXPECT_DOUBLE_EQ(sample_quantile(x, 0.05), 1.3); // h = 0.15: 1 + 0.15 * 2
  EXPECT_DOUBLE_EQ(sample_quantile(x, 0.95), 6.7); // h = 2.85: 5 + 0.85 * 2
  EXPECT_DOUBLE_EQ(sample_quantile(x, 1), 7);
  EXPECT_TRUE(std::isnan(sample_quantile({}, 0.5)));
}

// The samplers and quantile functions against the exact quantiles of each
// distribution. 1023 Sobol' points: each coordinate takes the values
// k/1024, k = 1..1023, once, so the empirical quantile of u lies within
// 1/1024 of p; a Latin hypercube of 1000 has one point per 1/1000 stratum,
// so within 1/1000. The tolerances below are that error in u carried
// through each quantile function's slope, doubled.
TEST(Uncertainty, DistributionsMatchTheirExactQuantiles)
{
  for (const std::string sampling : {"sobol", "latin"})
    {
      SCOPED_TRACE(sampling);
      const std::size_t n = sampling == "sobol" ? 1023 : 1000;
      // Uniform on [2, 20]: quantile 2 + 18 p, slope 18.
      const auto uni = draw("uniform:2:20", n, sampling);
      for (const double p : {0.05, 0.5, 0.95})
        EXPECT_NEAR(sample_quantile(uni, p), 2 + 18 * p, 2 * 18 / 1000.0) << p;
      // Log-uniform on [1e-7, 1e-5]: quantile 1e-7 * 100^p; slope ln(100) q.
      const auto logu = draw("log-uniform:1e-7:1e-5", n, sampling);
      for (const double p : {0.05, 0.5, 0.95})
        {
          const double exact = 1e-7 * std::pow(100.0, p);
          EXPECT_NEAR(sample_quantile(logu, p), exact, 2 * std::log(100.0) * exact / 1000.0) << p;
        }
      // Normal, mean 5, SD 0.5: z(0.95) = 1.6448536 (standard normal table,
      // M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions,
      // 1964, Table 26.5, from memory); slope SD / phi(z) = 0.5 / 0.1031 at
      // p = 0.05, 0.95 and 0.5 / 0.3989 at the median.
      const auto nor = draw("normal:5:0.5", n, sampling);
      EXPECT_NEAR(sample_quantile(nor, 0.5), 5, 2 * 0.5 / 0.3989 / 1000);
      EXPECT_NEAR(sample_quantile(nor, 0.05), 5 - 0.5 * 1.6448536, 2 * 0.5 / 0.1031 / 1000);
      EXPECT_NEAR(sample_quantile(nor, 0.95), 5 + 0.5 * 1.6448536, 2 * 0.5 / 0.1031 / 1000);
    }
  // The Latin hypercube depends on its seed, and repeats with the same one.
  UncertaintyArguments a;
  a.uncertain = {"Absorber/Thickness=uniform:0:1"};
  a.samples = "8", a.sampling = "latin", a.seed = "7";
  const auto first = make_samples(a).values;
  EXPECT_EQ(make_samples(a).values, first);
  a.seed = "8";
  EXPECT_NE(make_samples(a).values, first);
}

// The analytic band: collection (2L/g) tanh(g/2L) with L uniform in
// [2, 20] um. f increases with L, so its p-quantile is f at the p-quantile
// of L; the 5 %, 50 % and 95 % band of the bands code (band_points over
// synthetic rows of 1023 samples) matches it within 1 % at each gap.
TEST(Uncertainty, BandOfCollectionMatchesAnalyticQuantiles)
{
  const auto                     L    = draw("uniform:2:20", 1023);
  const std::vector<std::string> gaps = {"5", "20", "50", "100"};
  StudyPlan                      plan = synthetic_plan(gaps, L);
  const auto rows   = synthetic_rows(plan, [&](std::size_t s, double g) { return 10 * collection(L[s], g); },
                                     [&](std::size_t s, double g) { return collection(L[s], g); });
  const auto points = band_points(plan, rows);
  ASSERT_EQ(points.size(), gaps.size());
  for (std::size_t k = 0; k < gaps.size(); ++k)
    {
      const double g = std::stod(gaps[k]);
      EXPECT_EQ(points[k].with_result, 1023u);
      EXPECT_NEAR(*points[k].low.collection_efficiency / collection(2 + 18 * 0.05, g), 1, 0.01) << g;
      EXPECT_NEAR(*points[k].median.collection_efficiency / collection(2 + 18 * 0.5, g), 1, 0.01) << g;
      EXPECT_NEAR(*points[k].high.collection_efficiency / collection(2 + 18 * 0.95, g), 1, 0.01) << g;
      std::printf("gap %5.0f um: band %.5f %.5f %.5f, analytic %.5f %.5f %.5f\n", g,
                  *points[k].low.collection_efficiency, *points[k].median.collection_efficiency,
                  *points[k].high.collection_efficiency, collection(2.9, g), collection(11, g), collection(19.1, g));
    }
  // The CSV carries them with the percentile names.
  const std::string csv = bands_csv_text(plan, points);
  EXPECT_NE(csv.find("collection_efficiency_median,collection_efficiency_p5,collection_efficiency_p95"),
            std::string::npos);
}

// A failed sample is counted, not dropped silently, and stays out of the
// quantiles.
TEST(Uncertainty, FailedSamplesAreCountedPerGridPoint)
{
  StudyPlan plan = synthetic_plan({"5", "10"}, {1, 2, 3});
  auto      rows = synthetic_rows(plan, [](std::size_t s, double) { return 10.0 + double(s); },
                                  [](std::size_t, double) { return 0.9; });
  rows[3].status = Status::failed; // sample 1 at gap 10
  rows[3].PCE.reset();
  const auto points = band_points(plan, rows);
  EXPECT_EQ(points[1].failed, 1u);
  EXPECT_EQ(points[1].with_result, 2u);
  EXPECT_DOUBLE_EQ(*points[1].median.PCE, 11); // median of 10 and 12 (type 7)
  const auto r = recommend_with_samples(plan, rows, points);
  EXPECT_EQ(r.complete, 2u);
  EXPECT_NE(r.text.find("1 sample has a failed or missing case"), std::string::npos) << r.text;
}

// Zero uncertainty (LOW = HIGH): every sample is the unsampled case, so
// each band collapses onto the plain curve and the recommended gap is
// today's gap to make, with and without a cost per gap.
TEST(Uncertainty, ZeroUncertaintyCollapsesToThePlainSweep)
{
  const auto L = draw("uniform:3:3", 4);
  for (const double v : L)
    EXPECT_EQ(v, 3);
  const std::vector<std::string> gaps = {"5", "10", "20", "50", "100"};
  StudyPlan                      plan = synthetic_plan(gaps, L);
  // PCE: falls slowly, then fast (10, 9.95, 9.85, 9.2, 6 %).
  const auto pce  = [](std::size_t, double g) { return g <= 5 ? 10.0 : g <= 10 ? 9.95 : g <= 20 ? 9.85 : g <= 50 ? 9.2 : 6.0; };
  const auto rows = synthetic_rows(plan, pce, [&](std::size_t s, double g) { return collection(L[s], g); });
  const auto points = band_points(plan, rows);
  for (std::size_t k = 0; k < gaps.size(); ++k)
    {
      EXPECT_EQ(*points[k].low.PCE, *rows[k].PCE);
      EXPECT_EQ(*points[k].median.PCE, *rows[k].PCE);
      EXPECT_EQ(*points[k].high.collection_efficiency, *rows[k].collection_efficiency);
    }
  for (const bool cost : {false, true})
    {
      SCOPED_TRACE(cost ? "with a cost per gap" : "no cost");
      if (cost)
        plan.fabrication.gap_cost = {{5, 3}, {10, 1}, {20, 1.5}};
      const auto [plain_plan, plain_rows] = unsampled(plan, rows);
      const Recommendation today = recommend(plain_plan, plain_rows);
      ASSERT_TRUE(today.valid && today.chosen);
      const auto r = recommend_with_samples(plan, rows, points);
      ASSERT_TRUE(r.valid);
      EXPECT_EQ(*r.chosen, *today.chosen);
      EXPECT_EQ(r.share[*r.chosen], 1.0);
      EXPECT_EQ(gaps[*r.chosen], cost ? "10" : "20");
      // Nothing varies: the sensitivity says so.
      EXPECT_FALSE(r.choice_sensitivity.varies);
      EXPECT_NE(r.text.find("no uncertain entry moves it"), std::string::npos) << r.text;
    }
}

// Samples that disagree: the widest gap within the margin in at least the
// confidence share, and plain words when no gap reaches it.
TEST(Uncertainty, ConfidenceSelectsTheWidestGapOfEnoughSamples)
{
  // Ten samples; sample s keeps its PCE within 2 % of its best up to gap
  // 10 (s < 9) or 50 (s = 9): 10 um in 100 %, 20 and 50 um in 10 %.
  std::vector<double> L(10);
  std::iota(L.begin(), L.end(), 1.0);
  StudyPlan  plan = synthetic_plan({"5", "10", "20", "50"}, L);
  const auto pce  = [](std::size_t s, double g) { return g <= 10 ? 10.0 : s == 9 && g <= 50 ? 9.9 : 8.0; };
  auto rows = synthetic_rows(plan, pce, [](std::size_t, double) { return 0.9; });
  // Losses growing with the gap: the gap interface 0.01 mW/cm^2 per um
  // (+0.1 from 10 to 20 um), the film's resistance 0.001 per um (+0.01).
  for (auto &row : rows)
    row.loss_parts = {{"gap_interface_recombination", 0.01 * *row.gap_um}, {"film_joule", 0.001 * *row.gap_um}};
  const auto points = band_points(plan, rows);
  auto       r      = recommend_with_samples(plan, rows, points);
  ASSERT_TRUE(r.valid);
  EXPECT_EQ(plan.entries[0].values[*r.chosen], "10");
  EXPECT_DOUBLE_EQ(r.share[2], 0.1);
  EXPECT_NE(r.text.find("make Geometry/Gap = 10 um"), std::string::npos) << r.text;
  ASSERT_TRUE(r.beyond.has_value());
  EXPECT_EQ(plan.entries[0].values[*r.beyond], "20");
  EXPECT_EQ(r.limiting_loss, "gap_interface_recombination");
  EXPECT_NEAR(r.limiting_growth, 0.1, 1e-12);
  EXPECT_NE(r.text.find("Wider gaps lose most to recombination at the gap interface"), std::string::npos) << r.text;
  // A gap tolerance of 5 um around 10 um: at 15 um the PCE is 9.0 % (9 of
  // 10 samples, halfway between 10 and 8), below 98 % of the best 10 %;
  // the tenth sample has 9.95 % there (halfway between 10 and 9.9).
  plan.fabrication.gap_tolerance_um = 5;
  r                                 = recommend_with_samples(plan, rows, points);
  EXPECT_EQ(r.tolerance_checked, 10u);
  EXPECT_EQ(r.tolerance_holds, 1u);
  EXPECT_EQ(r.tolerance_unknown, 0u);
  EXPECT_NE(r.text.find("keeps the PCE within 2 % of the sample's best in 1 of 10 samples"), std::string::npos)
    << r.text;
  plan.fabrication.gap_tolerance_um = 0;
  // Films that disagree: five samples best at 5 um, five at 50 um, each
  // far below its best elsewhere: no gap is near its sample's best in
  // 90 % of the samples.
  const auto split = [](std::size_t s, double g) { return (s < 5 ? g == 5 : g == 50) ? 10.0 : 8.0; };
  const auto rows2 = synthetic_rows(plan, split, [](std::size_t, double) { return 0.9; });
  r                = recommend_with_samples(plan, rows2, band_points(plan, rows2));
  EXPECT_FALSE(r.valid);
  EXPECT_DOUBLE_EQ(r.share[0], 0.5);
  EXPECT_DOUBLE_EQ(r.share[3], 0.5);
  EXPECT_NE(r.text.find("no Geometry/Gap is within 2 % of each sample's best PCE in at least 90 %"),
            std::string::npos)
    << r.text;
  // The chosen gap Y is 5 um for the entry's values 1..5 and 50 um for
  // 6..10. By hand from the estimator's definition (3 classes of ranks
  // [0, 3), [3, 6), [6, 10)): class means 5, 20, 50 around the mean 27.5;
  // Var(E[Y|class]) n = 3 (22.5^2) + 3 (7.5^2) + 4 (22.5^2) = 3712.5 and
  // Var(Y) n = 10 (22.5^2) = 5062.5: S = 0.7333.
  EXPECT_EQ(r.choice_sensitivity.entries[0], "Absorber/Electron diffusion length");
  EXPECT_NEAR(r.choice_sensitivity.index[0], 3712.5 / 5062.5, 1e-12);
}

// The recommended gap against its neighbours, sample by sample: worked by
// hand from the constructed PCEs (no outside reference applies).
TEST(Uncertainty, NeighboursTheSamplesCannotSeparateAreNamed)
{
  // Ten samples: PCE 10 % up to 10 um in every sample; at 20 um 8 % (nine
  // samples) or 9.9 % (the tenth). 10 um is chosen; 5 um ties with it in
  // every sample (not separated), 20 um is lower in all ten (separated:
  // 10 > 9.9 (1 + 1e-3)).
  std::vector<double> L(10);
  std::iota(L.begin(), L.end(), 1.0);
  StudyPlan  plan = synthetic_plan({"5", "10", "20", "50"}, L);
  const auto pce  = [](std::size_t s, double g) { return g <= 10 ? 10.0 : s == 9 && g <= 50 ? 9.9 : 8.0; };
  const auto rows = synthetic_rows(plan, pce, [](std::size_t, double) { return 0.9; });
  const auto r    = recommend_with_samples(plan, rows, band_points(plan, rows));
  ASSERT_TRUE(r.valid);
  ASSERT_EQ(r.neighbours.size(), 2u);
  EXPECT_EQ(plan.entries[0].values[r.neighbours[0].other], "5");
  EXPECT_EQ(r.neighbours[0].counted, 10u);
  EXPECT_EQ(r.neighbours[0].named_higher + r.neighbours[0].other_higher, 0u);
  EXPECT_FALSE(r.neighbours[0].separated);
  EXPECT_EQ(plan.entries[0].values[r.neighbours[1].other], "20");
  EXPECT_EQ(r.neighbours[1].named_higher, 10u);
  EXPECT_TRUE(r.neighbours[1].separated);
  EXPECT_NE(r.text.find("The samples cannot separate 10 um from 5 um: 10 um has the higher PCE in 0 of 10 samples, "
                        "5 um in 0 (neither in 90 %)."),
            std::string::npos)
    << r.text;
  EXPECT_EQ(r.text.find("cannot separate 10 um from 20 um"), std::string::npos) << r.text;
  // Films that disagree (five best at 5 um, five at 50 um): nothing is
  // chosen; the most often within the margin, 5 um, is higher than 10 um
  // in the first five samples and ties in the others: not separated.
  const auto split = [](std::size_t s, double g) { return (s < 5 ? g == 5 : g == 50) ? 10.0 : 8.0; };
  const auto rows2 = synthetic_rows(plan, split, [](std::size_t, double) { return 0.9; });
  const auto r2    = recommend_with_samples(plan, rows2, band_points(plan, rows2));
  ASSERT_FALSE(r2.valid);
  ASSERT_EQ(r2.neighbours.size(), 1u);
  EXPECT_EQ(r2.neighbours[0].named_higher, 5u);
  EXPECT_EQ(r2.neighbours[0].other_higher, 0u);
  EXPECT_FALSE(r2.neighbours[0].separated);
}

// The given-data estimator on Y = 10 X1 + X2 with X1, X2 independent
// uniform on [0, 1]: exact first-order indices 100/101 and 1/101
// (Var(10 X1) = 100/12, Var(X2) = 1/12). With M = 32 classes of 1024
// samples the estimate of an index S carries a positive bias of about
// (M / N)(1 - S) = 0.03 from the noise of the class means (each holds 32
// samples; a standard argument, no source), so the tolerance is 0.04.
TEST(Uncertainty, SensitivityRanksTheDominantEntryFirst)
{
  UncertaintyArguments a;
  a.uncertain = {"A/X1=uniform:0:1", "A/X2=uniform:0:1"};
  a.samples   = "1024";
  const auto s = make_samples(a);
  std::vector<std::vector<double>> x(2);
  std::vector<double>              y;
  for (const auto &v : s.values)
    {
      x[0].push_back(v[0]), x[1].push_back(v[1]);
      y.push_back(10 * v[0] + v[1]);
    }
  EXPECT_EQ(sensitivity_classes(1024), 32u);
  const auto r = rank_entries("Y", {"A/X2", "A/X1"}, {x[1], x[0]}, y);
  ASSERT_EQ(r.entries.size(), 2u);
  EXPECT_EQ(r.entries[0], "A/X1");
  EXPECT_NEAR(r.index[0], 100.0 / 101, 0.04);
  EXPECT_NEAR(r.index[1], 1.0 / 101, 0.04);
  std::printf("S(X1) = %.4f (exact %.4f), S(X2) = %.4f (exact %.4f)\n", r.index[0], 100.0 / 101, r.index[1],
              1.0 / 101);
  // Y that does not vary has no index.
  EXPECT_FALSE(first_order_index(x[0], std::vector<double>(1024, 2.0)).has_value());
}

// A calibration's fit.json with two entries (one linear, one log-scaled)
// and correlation 0.8, sampled with 1024 Sobol' points: the sample mean,
// standard deviation and correlation (in the spaces the fit used: the
// value, ln of the value) match the file. Plain Monte Carlo would give a
// mean within 3 SD / sqrt(1024) = 0.09 SD, an SD within 3 / sqrt(2 * 1024)
// = 7 % and a correlation within 3 (1 - r^2) / sqrt(1024) = 0.034 (3
// standard errors; the large-sample standard errors of these estimators,
// from memory); quasi-random points do at least as well, so these are the
// tolerances.
TEST(Uncertainty, FitCovarianceIsReproducedBySamples)
{
  const fs::path folder = test_support::fresh_folder("bands-fit");
  write_fit(folder, "converged", true, 0.8);
  UncertaintyArguments a;
  a.from    = folder.string();
  a.samples = "1024";
  const auto s = make_samples(a);
  ASSERT_EQ(s.entries.size(), 2u);
  EXPECT_EQ(s.entries[1].path, "Absorber/Recombination/SRH/Electron lifetime");
  std::vector<double> t, ln_tau;
  for (const auto &v : s.values)
    t.push_back(v[0]), ln_tau.push_back(std::log(v[1]));
  EXPECT_NEAR(mean_of(t), 0.5, 0.09 * 0.05);
  EXPECT_NEAR(sd_of(t) / 0.05, 1, 0.07);
  const double sigma_ln = std::log(1.5); // one_sigma_factor
  EXPECT_NEAR(mean_of(ln_tau), std::log(1e-6), 0.09 * sigma_ln);
  EXPECT_NEAR(sd_of(ln_tau) / sigma_ln, 1, 0.07);
  double cov = 0;
  for (std::size_t i = 0; i < t.size(); ++i)
    cov += (t[i] - mean_of(t)) * (ln_tau[i] - mean_of(ln_tau));
  cov /= double(t.size() - 1);
  EXPECT_NEAR(cov / (sd_of(t) * sd_of(ln_tau)), 0.8, 0.034);
  std::printf("mean %.5f, %.5f; sd %.5f, %.5f; correlation %.4f\n", mean_of(t), mean_of(ln_tau), sd_of(t),
              sd_of(ln_tau), cov / (sd_of(t) * sd_of(ln_tau)));
  fs::remove_all(folder);
}

// A fit that did not converge, an entry the fit could not identify and a
// folder without fit.json are refused, naming the file and the entry.
TEST(Uncertainty, UnusableFitsAreRefused)
{
  const fs::path folder = test_support::fresh_folder("bands-badfit");
  const auto     error  = [&]() -> std::string {
    try
      {
        read_fitted_normal(folder.string());
      }
    catch (const InputError &e)
      {
        return e.what();
      }
    return "";
  };
  EXPECT_NE(error().find("holds no fit.json"), std::string::npos);
  write_fit(folder, "not converged", true, 0.8);
  EXPECT_NE(error().find("did not converge"), std::string::npos);
  EXPECT_NE(error().find("fit.json"), std::string::npos);
  write_fit(folder, "converged", false, 0.8);
  EXPECT_NE(error().find("Electron lifetime"), std::string::npos);
  EXPECT_NE(error().find("not identifiable"), std::string::npos);
  write_fit(folder, "converged", true, 1.0);
  EXPECT_NE(error().find("not positive definite"), std::string::npos);
  fs::remove_all(folder);
}

// Bad distributions and options: an InputError naming the option, the
// entry and the value.
TEST(Uncertainty, BadDistributionsAreInputErrors)
{
  const auto error = [](const std::string &text) -> std::string {
    try
      {
        parse_uncertain(text);
      }
    catch (const InputError &e)
      {
        return e.what();
      }
    return "";
  };
  EXPECT_NE(error("Absorber/Thickness=gamma:1:2").find("unknown distribution"), std::string::npos);
  EXPECT_NE(error("Absorber/Thickness=uniform:2:1").find("LOW is above HIGH"), std::string::npos);
  EXPECT_NE(error("Absorber/Thickness=normal:1:-1").find("SD must be >= 0"), std::string::npos);
  EXPECT_NE(error("Absorber/Thickness=log-uniform:0:1").find("LOW > 0"), std::string::npos);
  EXPECT_NE(error("Absorber/Thickness=uniform:1").find("two numbers"), std::string::npos);
  EXPECT_NE(error("Absorber/Thickness=uniform:1:2").find(""), std::string::npos);
  const auto option_error = [](UncertaintyArguments a) -> std::string {
    try
      {
        make_samples(a);
      }
    catch (const InputError &e)
      {
        return e.what();
      }
    return "";
  };
  UncertaintyArguments a;
  a.uncertain = {"Absorber/Thickness=uniform:0.3:0.5"};
  a.samples   = "0";
  EXPECT_NE(option_error(a).find("--samples"), std::string::npos);
  a.samples = "";
  a.band    = "50:95";
  EXPECT_NE(option_error(a).find("--band"), std::string::npos);
  a.band     = "";
  a.sampling = "random";
  EXPECT_NE(option_error(a).find("--sampling"), std::string::npos);
  UncertaintyArguments none;
  none.samples = "4";
  EXPECT_NE(option_error(none).find("needs an uncertain entry"), std::string::npos);
}

// The plan of a sampled sweep of tests/sweep_tiny.prm: samples outermost,
// the same sampled value at every gap of a sample, the value written with
// all its digits, stored and read back, and a changed distribution is a
// changed plan. A sample outside the entry's range is refused at plan time.
TEST(Uncertainty, PlanHoldsTheSamples)
{
  const std::string    file = BACKCOMB_TEST_SOURCE_DIR "/sweep_tiny.prm";
  UncertaintyArguments a;
  a.uncertain = {"Absorber/Transport/Electron mobility=log-uniform:1:100"};
  a.samples   = "3";
  const StudyPlan plan = make_plan(file, {}, {"Geometry/Strip length=1,2"}, {}, a);
  ASSERT_EQ(plan.cases.size(), 6u);
  EXPECT_EQ(grid_size(plan), 2u);
  for (std::size_t i = 0; i < 6; ++i)
    {
      const std::size_t s = i / 2;
      EXPECT_EQ(plan.cases[i].sample.value_or(99), s);
      EXPECT_EQ(plan.cases[i].overrides.back(),
                "Absorber/Transport/Electron mobility=" + sample_text(plan.samples.values[s][0]));
      EXPECT_EQ(std::stod(sample_text(plan.samples.values[s][0])), plan.samples.values[s][0]);
    }
  EXPECT_NE(plan.cases[2].id.find("__sample=1"), std::string::npos);
  // Sobol' point 1/2 of log-uniform [1, 100]: 10.
  EXPECT_NEAR(plan.samples.values[0][0], 10, 1e-12);
  const StudyPlan back = plan_from_json(plan_to_json(plan), "sweep-plan.json");
  EXPECT_EQ(plan_difference(back, plan), "");
  EXPECT_EQ(back.cases[5].sample.value_or(99), 2u);
  a.uncertain = {"Absorber/Transport/Electron mobility=log-uniform:1:1000"};
  EXPECT_NE(plan_difference(back, make_plan(file, {}, {"Geometry/Strip length=1,2"}, {}, a)).find("distribution"),
            std::string::npos);

  a.uncertain = {"Absorber/Transport/Electron mobility=normal:1:10"}; // negative samples
  try
    {
      make_plan(file, {}, {"Geometry/Strip length=1,2"}, {}, a);
      ADD_FAILURE() << "a negative mobility was accepted";
    }
  catch (const InputError &e)
    {
      const std::string m = e.what();
      EXPECT_NE(m.find("--uncertain Absorber/Transport/Electron mobility (normal:1:10, sample"), std::string::npos) << m;
    }
  a.uncertain = {"Geometry/Strip length=uniform:1:2"};
  try
    {
      make_plan(file, {}, {"Geometry/Strip length=1,2"}, {}, a);
      ADD_FAILURE() << "an entry both varied and sampled was accepted";
    }
  catch (const InputError &e)
    {
      EXPECT_NE(std::string(e.what()).find("also given with"), std::string::npos) << e.what();
    }
}

// The sensitivity sentence of a sampled sweep: the PCE at the recommended
// gap follows the first of two entries alone (Y = its value), the second is
// a permutation of the samples that Y ignores, so the first is named; the
// chosen gap is the same in every sample, which the sentence says.
TEST(Uncertainty, SensitivitySentenceNamesTheEntryToMeasure)
{
  std::vector<double> a(16);
  std::iota(a.begin(), a.end(), 1.0);
  StudyPlan plan = synthetic_plan({"5", "10"}, a);
  plan.samples.entries.push_back({"Gap interface/Electron recombination velocity", "cm/s", "synthetic"});
  for (std::size_t s = 0; s < 16; ++s)
    plan.samples.values[s].push_back(double((s * 7) % 16)); // independent of the first
  const auto rows = synthetic_rows(plan, [&](std::size_t s, double g) { return g == 5 ? 10 + 0.01 * a[s] : 5.0; },
                                   [](std::size_t, double) { return 0.9; });
  const auto r    = recommend_with_samples(plan, rows, band_points(plan, rows));
  ASSERT_TRUE(r.valid);
  EXPECT_FALSE(r.choice_sensitivity.varies);
  ASSERT_EQ(r.pce_sensitivity.entries.size(), 2u);
  EXPECT_EQ(r.pce_sensitivity.entries[0], "Absorber/Electron diffusion length");
  // 4 classes of 4 consecutive values of a linear Y: the class means
  // explain 1 - 1/16 of its variance (within-class variance (4^2 - 1)/12
  // of the whole (16^2 - 1)/12, the discrete uniform's variance).
  EXPECT_NEAR(r.pce_sensitivity.index[0], 1 - 15.0 / 255, 1e-12);
  EXPECT_NE(r.text.find("measure Absorber/Electron diffusion length better first"), std::string::npos) << r.text;
  EXPECT_NE(r.text.find("The chosen gap (each sample's widest within the margin) is the same in every counted sample"),
            std::string::npos)
    << r.text;
}
