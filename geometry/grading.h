// One-dimensional graded node distributions, the building block of the
// tensor-product meshes in period_mesh.cc. Pure functions of numbers, so
// they are unit-tested on their own.
#pragma once

#include <vector>

namespace backcomb::geometry
{
  // Sizes in any one length unit.
  struct GradingRule
  {
    double smallest; // cell size at a refined point
    double ratio;    // largest size ratio of neighbouring cells (> 1)
    double largest;  // no cell larger than this
  };

  // Cell sizes for an interval of the given length that is refined at its
  // start: h_j = min(first * ratio^j, U) for j = 0 .. N-1, where N is the
  // smallest count for which the sizes with U = largest reach the length,
  // and U <= largest is then chosen so that the sizes add up to the length
  // exactly. The sizes never decrease, every ratio of neighbours lies in
  // [1, ratio], and the first size is `first` or, in an interval too short
  // for that, the common size length/N < first.
  std::vector<double>
  graded_cells(double length, double first, double ratio, double largest);

  // Nodes on [breakpoints.front(), breakpoints.back()] (breakpoints strictly
  // increasing) that include every breakpoint. refined[i] marks the
  // breakpoints next to which cells must be smallest; every interval needs a
  // refined end. An interval refined at one end is graded away from it; an
  // interval refined at both ends is graded from both towards its middle.
  // All refined points get the same first cell size h0 <= rule.smallest on
  // both sides (h0 < rule.smallest only when an interval is too short for
  // rule.smallest), so neighbouring cells differ by at most rule.ratio
  // everywhere, including across breakpoints and the middles of intervals,
  // and no cell exceeds rule.largest. Symmetric across a middle means: the
  // far ends of two one-sided intervals meet only where both have the same
  // length (a mirror line), which the callers ensure.
  std::vector<double>
  graded_nodes(const std::vector<double> &breakpoints,
               const std::vector<bool>   &refined,
               const GradingRule         &rule);
} // namespace backcomb::geometry
