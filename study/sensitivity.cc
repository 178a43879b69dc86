#include "study/sensitivity.h"

#include <algorithm>
#include <cmath>
#include <numeric>

namespace backcomb::study
{
  std::size_t
  sensitivity_classes(const std::size_t n)
  {
    if (n < 4)
      return 0;
    const auto m = std::size_t(std::lround(std::sqrt(double(n))));
    return std::clamp<std::size_t>(m, 2, n / 2);
  }

  std::optional<double>
  first_order_index(const std::vector<double> &x, const std::vector<double> &y, std::size_t classes)
  {
    const std::size_t n = std::min(x.size(), y.size());
    if (classes == 0)
      classes = sensitivity_classes(n);
    if (classes < 2 || n < 2 * classes)
      return std::nullopt;
    const double mean = std::accumulate(y.begin(), y.begin() + long(n), 0.0) / double(n);
    double       total = 0;
    for (std::size_t i = 0; i < n; ++i)
      total += (y[i] - mean) * (y[i] - mean);
    // Y that does not vary beyond round-off of its mean.
    if (!(total > 1e-24 * double(n) * std::max(1.0, mean * mean)))
      return std::nullopt;

    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t(0));
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return x[a] < x[b]; });
    // Class c holds the samples of rank [c n / M, (c + 1) n / M).
    double between = 0;
    for (std::size_t c = 0; c < classes; ++c)
      {
        const std::size_t from = c * n / classes, to = (c + 1) * n / classes;
        double            sum  = 0;
        for (std::size_t r = from; r < to; ++r)
          sum += y[order[r]];
        const double class_mean = sum / double(to - from);
        between += double(to - from) * (class_mean - mean) * (class_mean - mean);
      }
    return between / total;
  }

  SensitivityRanking
  rank_entries(const std::string &result, const std::vector<std::string> &names,
               const std::vector<std::vector<double>> &x, const std::vector<double> &y)
  {
    SensitivityRanking r;
    r.result  = result;
    r.samples = y.size();
    r.classes = sensitivity_classes(y.size());
    for (const double v : y)
      r.varies = r.varies || std::abs(v - y.front()) > 1e-12 * std::max(1.0, std::abs(y.front()));
    std::vector<std::pair<double, std::string>> ranked;
    for (std::size_t k = 0; k < names.size(); ++k)
      {
        const auto s = first_order_index(x[k], y);
        ranked.emplace_back(s.value_or(std::nan("")), names[k]);
      }
    // Largest first; entries without an estimate last, in their order.
    std::stable_sort(ranked.begin(), ranked.end(), [](const auto &a, const auto &b) {
      return std::isfinite(a.first) && (!std::isfinite(b.first) || a.first > b.first);
    });
    for (const auto &[s, name] : ranked)
      r.entries.push_back(name), r.index.push_back(s);
    return r;
  }
} // namespace backcomb::study
