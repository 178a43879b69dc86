// Uncertain case-file entries of a sweep: their distributions (given per
// entry with --uncertain, or the fitted entries of a calibration with
// --uncertain-from), the quasi-random or Latin-hypercube points that sample
// them, and the sample quantiles that the bands of a sweep report.
//
// Every sample is one set of values of all uncertain entries; a sweep solves
// each sample at every grid point (common random numbers), so each sample
// has its own best gap.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

namespace backcomb::study
{
  // At most this many samples (each one is a case at every grid point).
  constexpr std::size_t max_samples = 10000;

  // The shape of one entry's distribution.
  enum class Distribution
  {
    uniform,     // uniform:LOW:HIGH       LOW <= HIGH
    log_uniform, // log-uniform:LOW:HIGH   0 < LOW <= HIGH, uniform in ln
    normal       // normal:MEAN:SD         SD >= 0
  };

  // An --uncertain "Section/Name=DIST:A:B" argument.
  struct UncertainEntry
  {
    std::string  path;         // "Absorber/Diffusion length"
    std::string  distribution; // "uniform:1:3" as given, for messages and the plan
    Distribution kind = Distribution::uniform;
    double       a = 0, b = 0; // LOW, HIGH or MEAN, SD
  };

  // Parses "Section/Name=uniform:LOW:HIGH" | "=log-uniform:LOW:HIGH" |
  // "=normal:MEAN:SD" (the entry not yet checked against the case file).
  // InputError naming --uncertain, the entry and the distribution text for
  // an unknown distribution, a missing or non-numeric parameter, LOW > HIGH,
  // SD < 0 and a log-uniform LOW <= 0.
  UncertainEntry parse_uncertain(const std::string &text);

  // The value of `e` at the cumulative probability u in (0, 1): the
  // distribution's quantile function.
  double quantile_of(const UncertainEntry &e, double u);

  // The fitted entries of a calibration as a multivariate normal: in ln of
  // the value for an entry fitted with log scaling, in the value itself for
  // linear scaling (the scalings the fit's covariance was computed in).
  struct FittedNormal
  {
    std::string              file;  // FOLDER/fit.json
    std::vector<std::string> paths;
    std::vector<bool>        log;   // per entry: normal in ln(value)
    std::vector<double>      mean;  // value, or ln(value)
    std::vector<double>      sd;    // standard deviation in the same space
    // Lower-triangular Cholesky factor of the covariance, row-major p x p.
    std::vector<double> cholesky;
  };

  // Reads FOLDER/fit.json of `backcomb calibrate`. InputError naming the
  // file for a missing or damaged file, a fit that did not converge, an
  // entry that is not identifiable or has no standard error (naming it),
  // and a covariance that is not positive definite.
  FittedNormal read_fitted_normal(const std::string &folder);

  // The values of the fitted entries for one vector of independent
  // standard-normal numbers z: mean + L z, exponentiated for log entries.
  std::vector<double> fitted_values(const FittedNormal &f, const std::vector<double> &z);

  enum class SamplingMethod
  {
    sobol, // Sobol' sequence (GSL gsl_qrng_sobol), at most 40 dimensions
    latin  // Latin hypercube (GSL mt19937, gsl_ran_shuffle), --seed
  };

  // `count` points in the open unit cube (0, 1)^dimensions, point-major.
  // Sobol: GSL's sequence starts at the point (1/2, ..., 1/2) (the point 0
  // of the sequence is skipped), so no coordinate is 0 or 1 for fewer than
  // 2^30 points. Latin hypercube: in each dimension one point per stratum
  // [k/N, (k+1)/N), the strata in a random order and the point uniformly
  // (gsl_rng_uniform_pos, never 0) within its stratum; the same seed gives
  // the same points.
  std::vector<std::vector<double>> unit_points(std::size_t count, std::size_t dimensions, SamplingMethod method,
                                               unsigned long seed);

  // What the command line asks for (--uncertain, --uncertain-from,
  // --samples, --sampling, --seed, --band), still as given.
  struct UncertaintyArguments
  {
    std::vector<std::string> uncertain;
    std::string              from;    // --uncertain-from FOLDER
    std::string              samples; // "" = default
    std::string              sampling, seed, band;

    bool given() const { return !uncertain.empty() || !from.empty(); }
  };

  // The sampled entries of a sweep and their values.
  struct SampleSet
  {
    struct Entry
    {
      std::string path, unit;
      std::string distribution; // "uniform:1:3", or "fit FOLDER/fit.json (log-normal)"
    };
    std::vector<Entry> entries;  // the --uncertain ones first, then the fitted ones
    std::string        from;     // --uncertain-from FOLDER ("" if none)
    std::size_t        count = 0;
    SamplingMethod     method = SamplingMethod::sobol;
    unsigned long      seed   = 1;
    // Band percentiles (--band LOW:HIGH), 0 < low < 50 < high < 100.
    double band_low = 5, band_high = 95;
    // values[sample][entry]
    std::vector<std::vector<double>> values;

    bool active() const { return !entries.empty(); }
  };

  // Parses the options and draws the samples (entries not yet checked
  // against the case file: make_plan does that). InputError naming the
  // option and the value for --samples 0 or not a whole number, an unknown
  // --sampling, a bad --band, a --seed that is not a whole number, options
  // without an uncertain entry, and more than 40 uncertain entries under
  // Sobol sampling.
  SampleSet make_samples(const UncertaintyArguments &args);

  // The sample quantile of definition 7 of R. J. Hyndman and Y. Fan,
  // "Sample quantiles in statistical packages", The American Statistician
  // 50 (1996) 361-365: with the sorted values x_1 <= ... <= x_n and
  // h = (n - 1) p, x_{floor h + 1} + (h - floor h)(x_{floor h + 2} -
  // x_{floor h + 1}). `values` need not be sorted; p in [0, 1]; NaN for
  // no values.
  double sample_quantile(std::vector<double> values, double p);
} // namespace backcomb::study
