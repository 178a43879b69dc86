#include "geometry/grading.h"

#include <algorithm>
#include <cmath>
#include <stdexcept>

namespace backcomb::geometry
{
  std::vector<double>
  graded_cells(const double length,
               const double first,
               const double ratio,
               const double largest)
  {
    if (!(length > 0 && first > 0 && ratio >= 1 && largest >= first))
      throw std::invalid_argument("graded_cells: invalid arguments");

    // N: the smallest count whose sizes, capped at `largest`, reach the
    // length.
    std::size_t n   = 0;
    double      sum = 0;
    for (double h = first; sum < length; h *= ratio, ++n)
      sum += std::min(h, largest);

    // Now lower the cap U from `largest` until the sum is exactly the
    // length. With m sizes below the cap the sum is G_m + (N - m) U, so for
    // each m the candidate U follows directly; the right m is the one whose
    // geometric sizes lie below U and whose next size does not. The sum
    // grows continuously and monotonically with U, so exactly one such U
    // exists (m = 0 covers U <= first: all cells equal).
    const double tolerance = 1e-12;
    double       g         = 0;     // G_m, the sum of the geometric sizes
    double       h         = first; // first * ratio^m
    for (std::size_t m = 0; m < n; ++m)
      {
        const double cap            = (length - g) / (n - m);
        const bool   geometric_below = (m == 0) || h / ratio <= cap * (1 + tolerance);
        const bool   next_not_below  = h >= cap * (1 - tolerance);
        if (geometric_below && next_not_below)
          {
            std::vector<double> sizes(n, cap);
            double              s = first;
            for (std::size_t j = 0; j < m; ++j, s *= ratio)
              sizes[j] = s;
            return sizes;
          }
        g += h;
        h *= ratio;
      }
    throw std::logic_error("graded_cells: no cap found");
  }

  namespace
  {
    // Appends the nodes after `from` up to and including `to` for cells
    // listed from `from` onwards.
    void
    append_forward(std::vector<double>       &nodes,
                   const double               from,
                   const double               to,
                   const std::vector<double> &cells)
    {
      double x = from;
      for (std::size_t k = 0; k + 1 < cells.size(); ++k)
        nodes.push_back(x += cells[k]);
      nodes.push_back(to);
    }

    // The same for cells listed from `to` backwards (refined at `to`).
    // Positions are accumulated from `to` so that the smallest cells carry
    // the smallest rounding error.
    void
    append_backward(std::vector<double>       &nodes,
                    const double               to,
                    const std::vector<double> &cells)
    {
      std::vector<double> from_end;
      double              x = to;
      for (std::size_t k = 0; k + 1 < cells.size(); ++k)
        from_end.push_back(x -= cells[k]);
      nodes.insert(nodes.end(), from_end.rbegin(), from_end.rend());
      nodes.push_back(to);
    }
  } // namespace

  std::vector<double>
  graded_nodes(const std::vector<double> &breakpoints,
               const std::vector<bool>   &refined,
               const GradingRule         &rule)
  {
    const std::size_t n_intervals = breakpoints.size() - 1;
    if (breakpoints.size() < 2 || refined.size() != breakpoints.size() ||
        !(rule.smallest > 0 && rule.ratio > 1 && rule.largest >= rule.smallest))
      throw std::invalid_argument("graded_nodes: invalid arguments");

    // Every graded piece: a whole interval refined at one end, or each half
    // of an interval refined at both ends.
    std::vector<double> piece_lengths;
    for (std::size_t i = 0; i < n_intervals; ++i)
      {
        const double length = breakpoints[i + 1] - breakpoints[i];
        if (!(length > 0))
          throw std::invalid_argument("graded_nodes: breakpoints must increase");
        if (!refined[i] && !refined[i + 1])
          throw std::invalid_argument("graded_nodes: interval without a refined end");
        if (refined[i] && refined[i + 1])
          piece_lengths.insert(piece_lengths.end(), 2, length / 2);
        else
          piece_lengths.push_back(length);
      }
    // An unrefined interior breakpoint joins the far ends of two pieces,
    // whose largest cells agree only if the pieces are mirror images.
    for (std::size_t i = 1; i < n_intervals; ++i)
      if (!refined[i])
        {
          const double left  = breakpoints[i] - breakpoints[i - 1];
          const double right = breakpoints[i + 1] - breakpoints[i];
          if (std::abs(left - right) > 1e-9 * (left + right))
            throw std::invalid_argument(
              "graded_nodes: an unrefined interior breakpoint must be a "
              "mirror line");
        }

    // One first size for all refined points, so that the two cells at a
    // refined point are equal. A piece too short for the current size
    // returns equal cells length/N below it; adopting that size lets the
    // piece keep its count N and start exactly there, so the iteration
    // stops after a few rounds.
    double h0 = rule.smallest;
    for (unsigned int round = 0;; ++round)
      {
        double h_min = h0;
        for (const double length : piece_lengths)
          h_min = std::min(
            h_min,
            graded_cells(length, h0, rule.ratio, rule.largest).front());
        if (h_min >= h0)
          break;
        h0 = h_min;
        if (round > 1000)
          throw std::logic_error("graded_nodes: first size does not settle");
      }

    std::vector<double> nodes{breakpoints.front()};
    for (std::size_t i = 0; i < n_intervals; ++i)
      {
        const double a = breakpoints[i], b = breakpoints[i + 1];
        if (refined[i] && refined[i + 1])
          {
            const double mid = a + (b - a) / 2;
            const auto   cells =
              graded_cells((b - a) / 2, h0, rule.ratio, rule.largest);
            append_forward(nodes, a, mid, cells);
            append_backward(nodes, b, cells);
          }
        else
          {
            const auto cells =
              graded_cells(b - a, h0, rule.ratio, rule.largest);
            if (refined[i])
              append_forward(nodes, a, b, cells);
            else
              append_backward(nodes, b, cells);
          }
      }
    return nodes;
  }
} // namespace backcomb::geometry
