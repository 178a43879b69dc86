// Which uncertain entry moves a result of a sweep most: the first-order
// variance-based sensitivity index of each sampled entry, estimated from
// the samples already solved (no extra solves).
//
// The "given data" estimator of E. Plischke, E. Borgonovo and C. L. Smith,
// "Global sensitivity measures from given data", European Journal of
// Operational Research 226 (2013) 536-550: the samples are put in order of
// the entry's value and cut into M classes of (nearly) equal count; the
// index is Var(E[Y | class]) / Var(Y), the variance of the class means
// (weighted by the class sizes) over the variance of Y. It needs no
// particular design of the samples, so Sobol' points, a Latin hypercube
// and the correlated samples of a fit all serve. With correlated entries
// an index includes what the entry carries of the others.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // The number of classes for n samples: the nearest whole number to
  // sqrt(n), at least 2 and at most n / 2 (each class holds two samples
  // at least); 0 when n < 4 (too few to estimate).
  std::size_t sensitivity_classes(std::size_t n);

  // The first-order index of Y on X from paired samples (x[i], y[i]) with
  // `classes` classes (sensitivity_classes(n) when 0). Nothing when Y does
  // not vary (no entry moves it) or there are too few samples.
  std::optional<double> first_order_index(const std::vector<double> &x, const std::vector<double> &y,
                                          std::size_t classes = 0);

  // One result Y and the index of every entry on it, ranked.
  struct SensitivityRanking
  {
    std::string              result;  // "chosen gap (um)", ...
    bool                     varies = false; // Y is not the same in every sample
    std::size_t              samples = 0;
    std::size_t              classes = 0;
    std::vector<std::string> entries; // ranked, largest index first
    std::vector<double>      index;   // NaN where not estimated
  };

  // Ranks the entries (names[k], values x[k][sample]) by their index on y.
  SensitivityRanking rank_entries(const std::string &result, const std::vector<std::string> &names,
                                  const std::vector<std::vector<double>> &x, const std::vector<double> &y);
} // namespace backcomb::study
