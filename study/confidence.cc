#include "study/confidence.h"

#include "base/format.h"
#include "study/rows.h"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <sstream>

namespace backcomb::study
{
  namespace
  {
    bool
    has_result(const StudyRow &r)
    {
      return r.status == Status::converged || r.status == Status::partial;
    }

    // The grid points whose share reaches the confidence, and the one to
    // make: the widest gap, or with a cost per gap the cheapest (of equal
    // cost the wider); for a study of another entry the largest share.
    std::optional<std::size_t>
    choose(const StudyPlan &plan, const std::vector<StudyRow> &grid_rows, const SampledRecommendation &r)
    {
      std::vector<std::size_t> candidates;
      for (std::size_t g = 0; g < r.share.size(); ++g)
        if (r.share[g] >= r.confidence - 1e-12)
          candidates.push_back(g);
      if (candidates.empty())
        return std::nullopt;
      // Of equal share, the point that is most often the best.
      if (!r.gap_study)
        return *std::max_element(candidates.begin(), candidates.end(), [&](std::size_t a, std::size_t b) {
          return std::make_pair(r.share[a], r.best_count[a]) < std::make_pair(r.share[b], r.best_count[b]);
        });
      const auto gap = [&](std::size_t g) { return *to_number(grid_rows[g].values[0]); };
      std::stable_sort(candidates.begin(), candidates.end(), [&](std::size_t a, std::size_t b) { return gap(a) < gap(b); });
      std::size_t chosen = candidates.front();
      for (const auto g : candidates)
        if (plan.fabrication.cost_at(gap(g)) <= plan.fabrication.cost_at(gap(chosen)))
          chosen = g;
      return chosen;
    }

    std::string
    percent(const double fraction)
    {
      return format_number(100 * fraction, 3) + " %";
    }

    // "A 0.82, B 0.10: measure A better first."
    std::string
    ranking_text(const SensitivityRanking &s, const std::string &what)
    {
      if (!s.varies)
        return " " + std::string(1, char(std::toupper(static_cast<unsigned char>(what[0])))) + what.substr(1) +
               " is the same in every counted sample: no uncertain entry moves it.";
      if (s.classes == 0)
        return " Too few samples (" + std::to_string(s.samples) + ", fewer than 4) to estimate which entry moves " +
               what + ".";
      std::string text = " First-order sensitivity (given-data estimate, " + std::to_string(s.classes) +
                         " classes of " + std::to_string(s.samples) + " samples) of " + what + ": ";
      for (std::size_t k = 0; k < s.entries.size(); ++k)
        text += (k ? ", " : "") + s.entries[k] + " " +
                (std::isfinite(s.index[k]) ? format_number(s.index[k], 2) : std::string("not estimated"));
      // The estimate's upward bias from the noise of the class means is
      // about classes / samples: entries closer than that to the first are
      // not told apart.
      const double             resolution = double(s.classes) / double(s.samples);
      std::vector<std::string> close      = {s.entries.front()};
      for (std::size_t k = 1; k < s.entries.size(); ++k)
        if (std::isfinite(s.index[k]) && s.index.front() - s.index[k] < resolution)
          close.push_back(s.entries[k]);
      if (close.size() > 1)
        {
          text += "; ";
          for (std::size_t k = 0; k < close.size(); ++k)
            text += (k == 0 ? "" : k + 1 == close.size() ? " and " : ", ") + close[k];
          return text + " cannot be told apart with these samples (resolution about " +
                 format_number(resolution, 2) + "): measure them better first, or add samples.";
        }
      return text + "; measure " + s.entries.front() + " better first.";
    }

    // The next wider gap on the chosen one's line and the loss whose median
    // grows most up to it (the median curve's counterpart of the plain
    // recommendation's limiting loss).
    void
    find_limit(const StudyPlan &plan, const std::vector<StudyRow> &grid_rows, const std::vector<BandPoint> &points,
               SampledRecommendation &r)
    {
      const auto line = line_through(plan, grid_rows, *r.chosen);
      if (const auto at = std::find(line.begin(), line.end(), *r.chosen); at + 1 != line.end())
        r.beyond = *(at + 1);
      if (!r.beyond)
        return;
      const auto &from = points[*r.chosen].median.loss_parts, &to = points[*r.beyond].median.loss_parts;
      for (const auto &part : loss_parts())
        {
          const auto a = from.find(part.key), b = to.find(part.key);
          if (a != from.end() && b != to.end() && b->second - a->second > r.limiting_growth)
            r.limiting_growth = b->second - a->second, r.limiting_loss = part.key;
        }
    }

    // The deciding PCE of one sample at gap g on the line `line` (ordered
    // by gap): a computed gap's own, or interpolated linearly between its
    // neighbours; nothing outside the computed gaps or next to a case
    // without a PCE.
    std::optional<double>
    pce_at(const Criterion c, const std::vector<StudyRow> &own, const std::vector<std::size_t> &line, const double g)
    {
      for (const auto i : line) // a computed gap itself
        if (*to_number(own[i].values[0]) == g)
          return deciding_pce(c, own[i]);
      for (std::size_t k = 0; k + 1 < line.size(); ++k)
        {
          const double g0 = *to_number(own[line[k]].values[0]), g1 = *to_number(own[line[k + 1]].values[0]);
          if (g < g0 || g > g1)
            continue;
          const auto p0 = deciding_pce(c, own[line[k]]), p1 = deciding_pce(c, own[line[k + 1]]);
          if (!p0 || !p1)
            return std::nullopt;
          return *p0 + (*p1 - *p0) * (g - g0) / (g1 - g0);
        }
      return std::nullopt;
    }

    // The gap tolerance around the chosen gap, sample by sample.
    void
    check_tolerance(const StudyPlan &plan, const std::vector<StudyRow> &rows, SampledRecommendation &r)
    {
      const double t = plan.fabrication.gap_tolerance_um;
      if (!(t > 0) || !r.chosen)
        return;
      const std::size_t grid = r.share.size();
      // Every sample has the same grid: the chosen point's line once.
      const auto line = line_through(plan, std::vector<StudyRow>(rows.begin(), rows.begin() + long(grid)), *r.chosen);
      for (std::size_t s = 0; s < r.samples; ++s)
        {
          const Recommendation &rec = r.per_sample[s];
          if (!r.sample_complete[s] || !rec.valid)
            continue;
          const std::vector<StudyRow> own(rows.begin() + long(s * grid), rows.begin() + long((s + 1) * grid));
          ++r.tolerance_checked;
          const double g    = *to_number(own[*r.chosen].values[0]);
          const auto   low  = pce_at(rec.criterion, own, line, g - t);
          const auto   high = pce_at(rec.criterion, own, line, g + t);
          const double best = *deciding_pce(rec.criterion, own[rec.best]);
          if (!low || !high)
            ++r.tolerance_unknown;
          else if (std::min(*low, *high) >= (1 - r.margin) * best)
            ++r.tolerance_holds;
        }
    }

    // The named grid point against its neighbours on its line, sample by
    // sample (SampledRecommendation::neighbours).
    void
    compare_neighbours(const StudyPlan &plan, const std::vector<StudyRow> &rows, SampledRecommendation &r)
    {
      const std::size_t named = r.chosen ? *r.chosen : *r.most_often;
      const std::size_t grid  = r.share.size();
      const auto line = line_through(plan, std::vector<StudyRow>(rows.begin(), rows.begin() + long(grid)), named);
      const auto at   = std::find(line.begin(), line.end(), named);
      std::vector<std::size_t> others;
      if (at != line.begin())
        others.push_back(*(at - 1));
      if (at + 1 != line.end())
        others.push_back(*(at + 1));
      for (const auto other : others)
        {
          SampledRecommendation::Comparison c;
          c.other = other;
          for (std::size_t s = 0; s < r.samples; ++s)
            {
              if (!r.sample_complete[s] || !r.per_sample[s].valid)
                continue;
              const Criterion crit = r.per_sample[s].criterion;
              const auto      a    = deciding_pce(crit, rows[s * grid + named]);
              const auto      b    = deciding_pce(crit, rows[s * grid + other]);
              if (!a || !b)
                continue;
              ++c.counted;
              if (*a > *b * (1 + solve_resolution))
                ++c.named_higher;
              else if (*b > *a * (1 + solve_resolution))
                ++c.other_higher;
            }
          const double needed = r.confidence * double(c.counted) - 1e-9;
          c.separated = c.counted > 0 && (double(c.named_higher) >= needed || double(c.other_higher) >= needed);
          r.neighbours.push_back(c);
        }
    }

    // The sentences of the recommendation.
    std::string
    sampled_text(const StudyPlan &plan, const std::vector<StudyRow> &grid_rows, const std::vector<BandPoint> &points,
                 const SampledRecommendation &r)
    {
      const StudyEntry  &first  = plan.entries.front();
      const auto         value  = [&](std::size_t g) { return with_unit(grid_rows[g].values[0], first.unit); };
      const std::string  margin = format_number(100 * r.margin, 3) + " %";
      const std::size_t  failed = r.samples - r.complete;
      std::ostringstream text;
      text << "Over " << r.samples << " samples of the uncertain entries";
      if (failed > 0)
        text << " (" << failed << (failed > 1 ? " samples have" : " sample has")
             << " a failed or missing case and " << (failed > 1 ? "are" : "is") << " not counted)";
      text << ": ";
      if (r.complete == 0)
        {
          text << "no recommendation, no sample has a result at every grid point.";
          return text.str();
        }
      const auto within = [&](std::size_t g) {
        return std::to_string(std::size_t(std::lround(r.share[g] * double(r.complete)))) + " of " +
               std::to_string(r.complete) + " samples (" + percent(r.share[g]) + ")";
      };
      if (r.chosen)
        {
          const std::size_t g = *r.chosen;
          text << (r.gap_study ? "make " : "choose ") << first.path << " = " << value(g) << ": within " << margin
               << " of each sample's best PCE in " << within(g) << ", Fabrication/Confidence "
               << format_number(100 * r.confidence, 3) << " %.";
          const auto &p = points[g];
          if (p.median.PCE || p.median.PCE_cell)
            {
              const Criterion c = r.per_sample.empty() ? Criterion::pce_per_footprint : r.per_sample.front().criterion;
              text << " Its PCE: median " << format_number(*deciding_pce(c, p.median), 4) << " %, "
                   << format_number(plan.samples.band_low, 3) << "-" << format_number(plan.samples.band_high, 3)
                   << " %: " << format_number(deciding_pce(c, p.low).value_or(NAN), 4) << " to "
                   << format_number(deciding_pce(c, p.high).value_or(NAN), 4) << " %.";
            }
          if (r.tolerance_checked > 0)
            {
              const std::string tol =
                "+/- " + with_unit(format_number(plan.fabrication.gap_tolerance_um, 4), first.unit);
              text << " A gap tolerance of " << tol << " keeps the PCE within " << margin << " of the sample's best in "
                   << r.tolerance_holds << " of " << r.tolerance_checked << " samples";
              if (r.tolerance_unknown > 0)
                text << " (not known in " << r.tolerance_unknown
                     << ": an end lies outside the computed gaps or next to a failed case)";
              text << " (PCE interpolated linearly between the computed gaps).";
            }
          if (r.beyond)
            {
              text << " The next wider gap, " << value(*r.beyond) << ", is within the margin in " << within(*r.beyond)
                   << ".";
              if (!r.limiting_loss.empty())
                for (const auto &part : loss_parts())
                  if (part.key == r.limiting_loss)
                    text << " Wider gaps lose most to " << part.words << " (median +"
                         << format_number(r.limiting_growth, 3) << " mW/cm^2 from " << value(g) << " to "
                         << value(*r.beyond) << ").";
            }
        }
      else
        text << "no " << first.path << " is within " << margin << " of each sample's best PCE in at least "
             << format_number(100 * r.confidence, 3) << " % (Fabrication/Confidence) of the " << r.complete
             << " counted samples; the most often within the margin is " << value(*r.most_often) << ", in "
             << within(*r.most_often)
             << ". Lower Fabrication/Confidence, widen Fabrication/Near-best margin, or measure the entry that moves "
                "the choice most (below) better.";
      // Neighbours the samples do not separate from the named point.
      const std::size_t named = r.chosen ? *r.chosen : *r.most_often;
      for (const auto &c : r.neighbours)
        if (!c.separated)
          text << " The samples cannot separate " << value(named) << " from " << value(c.other) << ": "
               << value(named) << " has the higher PCE in " << c.named_higher << " of " << c.counted << " samples, "
               << value(c.other) << " in " << c.other_higher << " (neither in "
               << format_number(100 * r.confidence, 3) << " %).";
      // The spread of the samples' own best.
      std::optional<std::size_t> lo, hi, often;
      for (std::size_t g = 0; g < r.best_count.size(); ++g)
        if (r.best_count[g] > 0)
          {
            const auto x = to_number(grid_rows[g].values[0]);
            if (!lo || (x && *x < *to_number(grid_rows[*lo].values[0])))
              lo = g;
            if (!hi || (x && *x > *to_number(grid_rows[*hi].values[0])))
              hi = g;
            if (!often || r.best_count[g] > r.best_count[*often])
              often = g;
          }
      if (often && all_numeric(first.values))
        text << " Each sample's best " << first.path << ": from " << value(*lo) << " to " << value(*hi)
             << " (most often " << value(*often) << ", " << r.best_count[*often] << " samples).";
      // A choice among values that are not numbers has no variance.
      if (all_numeric(first.values))
        text << ranking_text(r.choice_sensitivity, r.gap_study ? "the chosen gap (each sample's widest within the margin)"
                                                               : "the best " + first.path);
      if (r.chosen)
        text << ranking_text(r.pce_sensitivity, "the PCE at " + value(*r.chosen));
      return text.str();
    }
  } // namespace

  SampledRecommendation
  recommend_with_samples(const StudyPlan &plan, const std::vector<StudyRow> &rows, const std::vector<BandPoint> &points)
  {
    SampledRecommendation r;
    const std::size_t     grid = grid_size(plan);
    r.samples                  = plan.samples.count;
    r.confidence               = plan.fabrication.confidence_percent / 100;
    r.margin                   = plan.fabrication.near_best_percent / 100;
    r.gap_study                = plan.entries[0].path == "Geometry/Gap" && all_numeric(plan.entries[0].values);
    r.best_count.assign(grid, 0);
    std::vector<std::size_t> within(grid, 0);
    const std::vector<StudyRow> grid_rows(rows.begin(), rows.begin() + long(grid));
    for (std::size_t s = 0; s < r.samples; ++s)
      {
        const std::vector<StudyRow> own(rows.begin() + long(s * grid), rows.begin() + long((s + 1) * grid));
        const bool complete = std::all_of(own.begin(), own.end(), has_result);
        r.per_sample.push_back(recommend(plan, own));
        r.sample_complete.push_back(complete);
        r.sample_choice.emplace_back();
        r.pce_at_chosen.emplace_back();
        const Recommendation &rec = r.per_sample.back();
        if (!complete)
          continue;
        ++r.complete;
        if (!rec.valid)
          continue;
        for (const auto g : rec.near_best)
          ++within[g];
        ++r.best_count[rec.best];
        r.sample_choice.back() = to_number(own[r.gap_study ? *rec.widest : rec.best].values[0]);
      }
    r.share.assign(grid, 0.0);
    for (std::size_t g = 0; g < grid && r.complete > 0; ++g)
      r.share[g] = double(within[g]) / double(r.complete);
    if (r.complete > 0)
      {
        r.most_often = std::size_t(std::max_element(r.share.begin(), r.share.end()) - r.share.begin());
        r.chosen     = choose(plan, grid_rows, r);
        r.valid      = r.chosen.has_value();
        compare_neighbours(plan, rows, r);
        if (r.valid && r.gap_study)
          {
            find_limit(plan, grid_rows, points, r);
            check_tolerance(plan, rows, r);
          }
      }

    // Sensitivity over the samples that chose: x the sampled values.
    std::vector<std::string> names;
    for (const auto &e : plan.samples.entries)
      names.push_back(e.path);
    const auto ranking = [&](const std::string &what, const std::vector<std::optional<double>> &y) {
      std::vector<std::vector<double>> x(names.size());
      std::vector<double>              ys;
      for (std::size_t s = 0; s < y.size(); ++s)
        if (y[s])
          {
            ys.push_back(*y[s]);
            for (std::size_t k = 0; k < names.size(); ++k)
              x[k].push_back(plan.samples.values[s][k]);
          }
      return rank_entries(what, names, x, ys);
    };
    if (r.chosen)
      for (std::size_t s = 0; s < r.samples; ++s)
        if (r.sample_complete[s] && r.per_sample[s].valid)
          r.pce_at_chosen[s] = deciding_pce(r.per_sample[s].criterion, rows[s * grid + *r.chosen]);
    const std::string unit = plan.entries[0].unit;
    r.choice_sensitivity =
      ranking((r.gap_study ? std::string("chosen gap") : "best " + plan.entries[0].path) +
                (unit.empty() ? "" : " (" + unit + ")"),
              r.sample_choice);
    r.pce_sensitivity = ranking("PCE at the recommended point (%)", r.pce_at_chosen);
    r.text            = sampled_text(plan, grid_rows, points, r);
    return r;
  }
} // namespace backcomb::study
