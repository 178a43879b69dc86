#include "study/uncertainty.h"

#include "base/errors.h"
#include "base/format.h"
#include "study/layout.h"
#include "study/values.h"

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_qrng.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <memory>
#include <numeric>
#include <stdexcept>

namespace backcomb::study
{
  using json = nlohmann::json;

  namespace
  {
    // GSL's default error handler aborts; every GSL call here checks its
    // return value instead.
    struct GslHandlerOff
    {
      GslHandlerOff() { gsl_set_error_handler_off(); }
    };
    const GslHandlerOff gsl_handler_off;

    // A whole number 1 <= n <= most, or 0.
    std::size_t
    whole_number(const std::string &text, const double most)
    {
      const auto n = to_number(text);
      return (n && *n == std::floor(*n) && *n >= 1 && *n <= most) ? std::size_t(*n) : 0;
    }

    // "LOW:HIGH" percentiles, 0 < LOW < 50 < HIGH < 100.
    void
    parse_band(const std::string &text, SampleSet &s)
    {
      const auto parts = split(text, ':');
      const auto lo    = parts.size() == 2 ? to_number(parts[0]) : std::nullopt;
      const auto hi    = parts.size() == 2 ? to_number(parts[1]) : std::nullopt;
      if (!lo || !hi || !(*lo > 0 && *lo < 50 && *hi > 50 && *hi < 100))
        throw InputError("--band", text,
                         "expected LOW:HIGH percentiles with 0 < LOW < 50 < HIGH < 100 (the median is always given), "
                         "e.g. 5:95");
      s.band_low = *lo, s.band_high = *hi;
    }

    // The number at `key` of `j`, or an InputError naming the file.
    double
    number_of(const json &j, const char *key, const std::string &file, const std::string &entry)
    {
      if (!j.contains(key) || !j[key].is_number())
        throw InputError(file, entry, std::string("has no number \"") + key + "\" (damaged fit.json?)");
      return j[key].get<double>();
    }
  } // namespace

  UncertainEntry
  parse_uncertain(const std::string &text)
  {
    const auto eq = text.find('=');
    if (eq == std::string::npos || eq == 0)
      throw InputError("--uncertain", text,
                       "expected \"Section/Name=uniform:LOW:HIGH\", \"=log-uniform:LOW:HIGH\" or \"=normal:MEAN:SD\"");
    UncertainEntry e;
    e.path                = trim(text.substr(0, eq));
    e.distribution        = trim(text.substr(eq + 1));
    const std::string who = "--uncertain " + e.path;
    const auto        parts = split(e.distribution, ':');
    const std::string name  = parts.empty() ? "" : trim(parts[0]);
    if (name == "uniform")
      e.kind = Distribution::uniform;
    else if (name == "log-uniform")
      e.kind = Distribution::log_uniform;
    else if (name == "normal")
      e.kind = Distribution::normal;
    else
      throw InputError(who, e.distribution, "unknown distribution '" + name +
                                              "' (uniform:LOW:HIGH, log-uniform:LOW:HIGH or normal:MEAN:SD)");
    const auto a = parts.size() == 3 ? to_number(trim(parts[1])) : std::nullopt;
    const auto b = parts.size() == 3 ? to_number(trim(parts[2])) : std::nullopt;
    if (!a || !b)
      throw InputError(who, e.distribution,
                       name + " needs two numbers: " + (e.kind == Distribution::normal ? "MEAN:SD" : "LOW:HIGH"));
    e.a = *a, e.b = *b;
    if (e.kind != Distribution::normal && e.a > e.b)
      throw InputError(who, e.distribution, "LOW is above HIGH");
    if (e.kind == Distribution::log_uniform && !(e.a > 0))
      throw InputError(who, e.distribution, "a log-uniform distribution needs LOW > 0");
    if (e.kind == Distribution::normal && e.b < 0)
      throw InputError(who, e.distribution, "the standard deviation SD must be >= 0");
    return e;
  }

  double
  quantile_of(const UncertainEntry &e, const double u)
  {
    switch (e.kind)
      {
        case Distribution::uniform:
          return e.a + u * (e.b - e.a);
        case Distribution::log_uniform:
          // Ends exact: a degenerate range gives its value, not a rounded one.
          return e.a == e.b ? e.a : std::exp(std::log(e.a) + u * (std::log(e.b) - std::log(e.a)));
        case Distribution::normal:
          return e.b == 0 ? e.a : e.a + e.b * gsl_cdf_ugaussian_Pinv(u);
      }
    return std::nan("");
  }

  FittedNormal
  read_fitted_normal(const std::string &folder)
  {
    FittedNormal f;
    f.file = folder + "/fit.json";
    if (!std::filesystem::is_regular_file(f.file))
      throw InputError("--uncertain-from", folder,
                       "holds no fit.json (give the --out folder of a finished 'backcomb calibrate')");
    const json j = read_json(f.file);
    if (!j.is_object() || !j.contains("entries") || !j["entries"].is_array() || !j.contains("correlation") ||
        !j["correlation"].is_array())
      throw InputError(f.file + ": not a fit.json of backcomb calibrate (no \"entries\" or \"correlation\")");
    const std::string status = j.value("status", std::string());
    if (status != "converged")
      throw InputError(f.file, status, "the fit did not converge (" + j.value("reason", std::string("no reason")) +
                                         "); its standard errors do not describe the entries");
    for (const auto &e : j["entries"])
      {
        const std::string path = e.is_object() ? e.value("entry", std::string()) : std::string();
        if (path.empty())
          throw InputError(f.file + ": an entry without its name (damaged fit.json?)");
        if (!e.value("identifiable", false) || !e.contains("standard_error") || !e["standard_error"].is_number())
          throw InputError(f.file, path,
                           "is not identifiable (no standard error): the data do not fix it; give it with "
                           "--uncertain or leave it out of the fit");
        const double value = number_of(e, "value", f.file, path);
        const double se    = number_of(e, "standard_error", f.file, path);
        const bool   log   = e.value("scaling", std::string()) == "log";
        if (log && !(value > 0))
          throw InputError(f.file, path, "a log-scaled entry with a value <= 0 (damaged fit.json?)");
        f.paths.push_back(path);
        f.log.push_back(log);
        f.mean.push_back(log ? std::log(value) : value);
        // The fit's covariance is in ln(value) for log scaling: one_sigma_factor
        // is exp(sigma_ln); the linearised standard error is value * sigma_ln.
        f.sd.push_back(log ? (e.contains("one_sigma_factor") && e["one_sigma_factor"].is_number()
                                ? std::log(e["one_sigma_factor"].get<double>())
                                : se / value)
                           : se);
      }
    const std::size_t p = f.paths.size();
    if (p == 0)
      throw InputError(f.file + ": the fit has no entries");
    const json &corr = j["correlation"];
    if (corr.size() != p)
      throw InputError(f.file + ": the correlation matrix is not " + std::to_string(p) + " x " + std::to_string(p));
    std::unique_ptr<gsl_matrix, decltype(&gsl_matrix_free)> cov(gsl_matrix_alloc(p, p), &gsl_matrix_free);
    for (std::size_t a = 0; a < p; ++a)
      for (std::size_t b = 0; b < p; ++b)
        {
          if (!corr[a].is_array() || corr[a].size() != p || !corr[a][b].is_number())
            throw InputError(f.file, f.paths[a],
                             "has no correlation with " + f.paths[b] + " (damaged fit.json, or not identifiable)");
          gsl_matrix_set(cov.get(), a, b, f.sd[a] * f.sd[b] * corr[a][b].get<double>());
        }
    // A zero standard deviation (an exactly known entry) has a zero row; a
    // tiny diagonal floor keeps the factorisation defined without moving
    // the samples measurably.
    for (std::size_t a = 0; a < p; ++a)
      if (f.sd[a] == 0)
        gsl_matrix_set(cov.get(), a, a, 1e-300);
    if (gsl_linalg_cholesky_decomp1(cov.get()) != GSL_SUCCESS)
      throw InputError(f.file + ": the covariance of the fitted entries is not positive definite (correlations of "
                                "+-1 or inconsistent); it cannot be sampled");
    f.cholesky.assign(p * p, 0.0);
    for (std::size_t a = 0; a < p; ++a)
      for (std::size_t b = 0; b <= a; ++b)
        f.cholesky[a * p + b] = f.sd[a] == 0 || f.sd[b] == 0 ? 0.0 : gsl_matrix_get(cov.get(), a, b);
    return f;
  }

  std::vector<double>
  fitted_values(const FittedNormal &f, const std::vector<double> &z)
  {
    const std::size_t   p = f.paths.size();
    std::vector<double> v(p);
    for (std::size_t a = 0; a < p; ++a)
      {
        double x = f.mean[a];
        for (std::size_t b = 0; b <= a; ++b)
          x += f.cholesky[a * p + b] * z[b];
        v[a] = f.log[a] ? std::exp(x) : x;
      }
    return v;
  }

  std::vector<std::vector<double>>
  unit_points(const std::size_t count, const std::size_t dimensions, const SamplingMethod method,
              const unsigned long seed)
  {
    std::vector<std::vector<double>> points(count, std::vector<double>(dimensions));
    if (dimensions == 0)
      return points;
    if (method == SamplingMethod::sobol)
      {
        std::unique_ptr<gsl_qrng, decltype(&gsl_qrng_free)> q(gsl_qrng_alloc(gsl_qrng_sobol, unsigned(dimensions)),
                                                              &gsl_qrng_free);
        if (!q)
          throw std::runtime_error("GSL Sobol' sequence: cannot allocate " + std::to_string(dimensions) +
                                   " dimensions");
        for (auto &point : points)
          gsl_qrng_get(q.get(), point.data());
      }
    else
      {
        std::unique_ptr<gsl_rng, decltype(&gsl_rng_free)> r(gsl_rng_alloc(gsl_rng_mt19937), &gsl_rng_free);
        gsl_rng_set(r.get(), seed);
        std::vector<std::size_t> strata(count);
        for (std::size_t d = 0; d < dimensions; ++d)
          {
            std::iota(strata.begin(), strata.end(), std::size_t(0));
            gsl_ran_shuffle(r.get(), strata.data(), count, sizeof(std::size_t));
            for (std::size_t k = 0; k < count; ++k)
              points[k][d] = (double(strata[k]) + gsl_rng_uniform_pos(r.get())) / double(count);
          }
      }
    for (const auto &point : points)
      for (const double u : point)
        if (!(u > 0 && u < 1))
          throw std::runtime_error("sampling: a unit coordinate " + format_number(u) + " is not inside (0, 1)");
    return points;
  }

  SampleSet
  make_samples(const UncertaintyArguments &args)
  {
    SampleSet s;
    if (!args.given())
      {
        for (const auto &[option, value] : {std::pair<const char *, std::string>{"--samples", args.samples},
                                            {"--sampling", args.sampling},
                                            {"--seed", args.seed},
                                            {"--band", args.band}})
          if (!value.empty())
            throw InputError(option, value, "needs an uncertain entry (--uncertain or --uncertain-from)");
        return s;
      }
    s.count = 16;
    if (!args.samples.empty() && (s.count = whole_number(args.samples, double(max_samples))) == 0)
      throw InputError("--samples", args.samples, "needs a whole number of samples, 1 to 10000");
    if (args.sampling == "latin")
      s.method = SamplingMethod::latin;
    else if (!args.sampling.empty() && args.sampling != "sobol")
      throw InputError("--sampling", args.sampling, "is 'sobol' (the default) or 'latin'");
    if (!args.seed.empty())
      {
        s.seed = whole_number(args.seed, 4294967295.0);
        if (s.seed == 0)
          throw InputError("--seed", args.seed, "needs a whole number, 1 to 4294967295");
        if (s.method != SamplingMethod::latin)
          throw InputError("--seed", args.seed, "applies to --sampling latin only (the Sobol' sequence is fixed)");
      }
    if (!args.band.empty())
      parse_band(args.band, s);

    std::vector<UncertainEntry> given;
    for (const auto &text : args.uncertain)
      {
        given.push_back(parse_uncertain(text));
        s.entries.push_back({given.back().path, "", given.back().distribution});
      }
    FittedNormal fitted;
    if (!args.from.empty())
      {
        s.from = args.from;
        fitted = read_fitted_normal(args.from);
        for (std::size_t a = 0; a < fitted.paths.size(); ++a)
          s.entries.push_back(
            {fitted.paths[a], "", "fit " + fitted.file + (fitted.log[a] ? " (log-normal)" : " (normal)")});
      }
    const std::size_t dimensions = s.entries.size();
    if (s.method == SamplingMethod::sobol && dimensions > gsl_qrng_sobol->max_dimension)
      throw InputError("--uncertain", std::to_string(dimensions) + " entries",
                       "the Sobol' sequence has at most 40 dimensions; use --sampling latin");

    for (const auto &u : unit_points(s.count, dimensions, s.method, s.seed))
      {
        std::vector<double> values;
        for (std::size_t k = 0; k < given.size(); ++k)
          values.push_back(quantile_of(given[k], u[k]));
        if (!fitted.paths.empty())
          {
            std::vector<double> z;
            for (std::size_t k = given.size(); k < dimensions; ++k)
              z.push_back(gsl_cdf_ugaussian_Pinv(u[k]));
            for (const double v : fitted_values(fitted, z))
              values.push_back(v);
          }
        s.values.push_back(std::move(values));
      }
    return s;
  }

  double
  sample_quantile(std::vector<double> values, const double p)
  {
    if (values.empty())
      return std::nan("");
    std::sort(values.begin(), values.end());
    const double      h  = double(values.size() - 1) * std::clamp(p, 0.0, 1.0);
    const std::size_t lo = std::size_t(std::floor(h));
    if (lo + 1 >= values.size())
      return values.back();
    return values[lo] + (h - double(lo)) * (values[lo + 1] - values[lo]);
  }
} // namespace backcomb::study
