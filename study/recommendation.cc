#include "study/recommendation.h"

#include "base/format.h"
#include "study/rows.h"

#include <algorithm>
#include <sstream>

namespace backcomb::study
{
  namespace
  {
    // "Geometry/Electron finger width = 4 um, ..." for the entries after
    // the first.
    std::string
    other_values_text(const StudyPlan &plan, const StudyRow &row)
    {
      std::string text;
      for (std::size_t k = 1; k < plan.entries.size(); ++k)
        text += (k > 1 ? ", " : "") + plan.entries[k].path + " = " + with_unit(row.values[k], plan.entries[k].unit);
      return text;
    }

    const char *const gap_path = "Geometry/Gap";

    // True when the row's gap (if known) lies within the fabrication limits.
    bool
    within_limits(const StudyPlan &plan, const StudyRow &row)
    {
      const auto g = gap_of(plan, row);
      return !g || (*g >= plan.fabrication.smallest_gap_um && *g <= plan.fabrication.largest_gap_um);
    }

    // The contiguous run around the best within the margin; a failed or
    // missing neighbour, or one outside the fabrication limits, ends the
    // run, since nothing is known (or can be made) there.
    void
    find_near_best(const StudyPlan &plan, const std::vector<StudyRow> &rows, const std::vector<std::size_t> &line,
                   Recommendation &rec)
    {
      const auto   at    = std::size_t(std::find(line.begin(), line.end(), rec.best) - line.begin());
      const double limit = (1 - rec.margin) * *deciding_pce(rec.criterion, rows[rec.best]);
      auto         near  = [&](std::size_t k) {
        const auto pce = deciding_pce(rec.criterion, rows[line[k]]);
        return pce && *pce >= limit && within_limits(plan, rows[line[k]]) &&
               rows[line[k]].bound_violations.value_or(0) == 0;
      };
      std::size_t lo = at, hi = at;
      while (lo > 0 && near(lo - 1))
        --lo;
      while (hi + 1 < line.size() && near(hi + 1))
        ++hi;
      rec.near_best.assign(line.begin() + long(lo), line.begin() + long(hi) + 1);
      rec.at_edge = line.size() > 1 && (at == 0 || at + 1 == line.size());
    }

    // The deciding PCE at gap `g`: a computed gap's own, or interpolated
    // linearly between the two computed gaps of the line around it (the
    // line ordered by gap); nothing outside the computed gaps or next to a
    // case without a PCE.
    std::optional<double>
    pce_at_gap(const Recommendation &rec, const std::vector<StudyRow> &rows, const std::vector<std::size_t> &line,
               const double g)
    {
      for (const auto i : line) // a computed gap itself
        if (*to_number(rows[i].values[0]) == g)
          return deciding_pce(rec.criterion, rows[i]);
      for (std::size_t k = 0; k + 1 < line.size(); ++k)
        {
          const double g0 = *to_number(rows[line[k]].values[0]), g1 = *to_number(rows[line[k + 1]].values[0]);
          if (g < g0 || g > g1)
            continue;
          const auto p0 = deciding_pce(rec.criterion, rows[line[k]]);
          const auto p1 = deciding_pce(rec.criterion, rows[line[k + 1]]);
          if (!p0 || !p1)
            return std::nullopt;
          return *p0 + (*p1 - *p0) * (g - g0) / (g1 - g0);
        }
      return std::nullopt;
    }

    // The gap to make, the tolerance check, the cases the solve cannot
    // separate and what sets the limit; for a study whose first entry is
    // the gap.
    void
    judge_gaps(const StudyPlan &plan, const std::vector<StudyRow> &rows, const std::vector<std::size_t> &line,
               Recommendation &rec)
    {
      const auto  &fab  = plan.fabrication;
      const double best = *deciding_pce(rec.criterion, rows[rec.best]);
      const auto   gap  = [&](std::size_t i) { return *to_number(rows[i].values[0]); };
      rec.widest        = rec.near_best.back();
      rec.chosen        = rec.widest;
      if (!fab.gap_cost.empty())
        for (const auto i : rec.near_best) // increasing gap: of equal cost the wider
          if (fab.cost_at(gap(i)) <= fab.cost_at(gap(*rec.chosen)))
            rec.chosen = i;

      const auto at = std::size_t(std::find(line.begin(), line.end(), *rec.widest) - line.begin());
      if (at + 1 < line.size())
        {
          rec.beyond                = line[at + 1];
          rec.beyond_outside_limits = gap(*rec.beyond) > fab.largest_gap_um;
          const auto p              = deciding_pce(rec.criterion, rows[*rec.beyond]);
          const auto w              = deciding_pce(rec.criterion, rows[*rec.widest]);
          rec.limit_unresolved      = p && !rec.beyond_outside_limits && *w - *p < solve_resolution * best;
          if (p)
            for (const auto &part : loss_parts())
              {
                const auto a = rows[rec.best].loss_parts.find(part.key);
                const auto b = rows[*rec.beyond].loss_parts.find(part.key);
                if (a == rows[rec.best].loss_parts.end() || b == rows[*rec.beyond].loss_parts.end())
                  continue;
                if (b->second - a->second > rec.limiting_growth)
                  rec.limiting_growth = b->second - a->second, rec.limiting_loss = part.key;
              }
        }

      for (const auto i : line)
        if (i != rec.best && within_limits(plan, rows[i]))
          if (const auto p = deciding_pce(rec.criterion, rows[i]); p && best - *p < solve_resolution * best)
            rec.inseparable.push_back(i);

      if (fab.gap_tolerance_um > 0)
        {
          const double g = gap(*rec.chosen);
          rec.pce_low    = pce_at_gap(rec, rows, line, g - fab.gap_tolerance_um);
          rec.pce_high   = pce_at_gap(rec, rows, line, g + fab.gap_tolerance_um);
          if (!rec.pce_low || !rec.pce_high)
            rec.tolerance = ToleranceCheck::not_known;
          else
            rec.tolerance = std::min(*rec.pce_low, *rec.pce_high) >= (1 - rec.margin) * best ? ToleranceCheck::holds
                                                                                             : ToleranceCheck::fails;
        }
    }

    std::string
    loss_words(const std::string &key)
    {
      for (const auto &p : loss_parts())
        if (p.key == key)
          return p.words;
      return key;
    }

    // The sentences about the gap to make (gap studies only).
    std::string
    gap_text(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec)
    {
      const auto        &fab    = plan.fabrication;
      const std::string  unit   = plan.entries[0].unit;
      const std::string  margin = format_number(100 * rec.margin, 3) + " %";
      const auto         value  = [&](std::size_t i) { return with_unit(rows[i].values[0], unit); };
      const auto         pce    = [&](std::size_t i) { return format_number(*deciding_pce(rec.criterion, rows[i]), 4); };
      std::ostringstream text;
      text << " Widest gap within " << margin << " of the best: " << value(*rec.widest) << " (PCE " << pce(*rec.widest)
           << " %).";
      if (rec.chosen != rec.widest)
        text << " Cheapest gap within " << margin << " of the best (Fabrication/Cost per gap): " << value(*rec.chosen)
             << " (relative cost " << format_number(fab.cost_at(*to_number(rows[*rec.chosen].values[0])), 3)
             << " against " << format_number(fab.cost_at(*to_number(rows[*rec.widest].values[0])), 3) << ").";
      text << " Make " << value(*rec.chosen) << ".";
      const std::string tol = "+/- " + with_unit(format_number(fab.gap_tolerance_um, 4), unit);
      switch (rec.tolerance)
        {
          case ToleranceCheck::not_asked:
            break;
          case ToleranceCheck::holds:
          case ToleranceCheck::fails:
            text << " A gap tolerance of " << tol
                 << (rec.tolerance == ToleranceCheck::holds ? " keeps the PCE within " : " does not keep the PCE within ")
                 << margin << " of the best (PCE " << format_number(*rec.pce_low, 4) << " % and "
                 << format_number(*rec.pce_high, 4) << " % at its ends, interpolated linearly between the computed gaps).";
            break;
          case ToleranceCheck::not_known:
            text << " Whether a gap tolerance of " << tol << " keeps the PCE within " << margin
                 << " is not known: an end lies outside the computed gaps or next to a failed case.";
            break;
        }
      if (!rec.inseparable.empty())
        {
          text << " The solve cannot tell " << value(rec.best) << " from ";
          for (std::size_t k = 0; k < rec.inseparable.size(); ++k)
            text << (k == 0 ? "" : k + 1 == rec.inseparable.size() ? " and " : ", ") << value(rec.inseparable[k]);
          text << ": their PCE differ by less than " << format_number(100 * solve_resolution, 3)
               << " % (relative), within the numerical accuracy.";
        }
      if (!rec.beyond)
        text << " The widest gap within the margin is the widest computed: extend the sweep to find what limits it.";
      else if (rec.beyond_outside_limits)
        text << " Wider gaps are beyond Fabrication/Largest gap = " << with_unit(format_number(fab.largest_gap_um, 6), unit)
             << ".";
      else if (!deciding_pce(rec.criterion, rows[*rec.beyond]))
        text << " The next gap, " << value(*rec.beyond) << ", has no result: what limits wider gaps is not known.";
      else
        {
          if (rec.limit_unresolved)
            text << " " << value(*rec.widest) << " and " << value(*rec.beyond)
                 << " cannot be told apart (PCE within the numerical accuracy): the end of the margin is not resolved.";
          if (!rec.limiting_loss.empty())
            text << " Wider gaps lose most to " << loss_words(rec.limiting_loss) << " (+"
                 << format_number(rec.limiting_growth, 3) << " mW/cm^2 from " << value(rec.best) << " to "
                 << value(*rec.beyond) << ").";
          else
            text << " No loss in the cases' losses table grows from " << value(rec.best) << " to " << value(*rec.beyond)
                 << ".";
        }
      return text.str();
    }

    // The sentence printed and stored in sweep.json.
    std::string
    recommendation_text(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec)
    {
      const StudyEntry  &first = plan.entries.front();
      const StudyRow    &best  = rows[rec.best];
      const std::string  others = other_values_text(plan, best);
      std::ostringstream text;
      text << "Best " << first.path << " (" << criterion_text(rec.criterion)
           << "): " << with_unit(best.values[0], first.unit);
      if (!others.empty())
        text << " (with " << others << ")";
      text << ", PCE " << format_number(*deciding_pce(rec.criterion, best), 4) << " %";
      if (best.collection_efficiency)
        text << ", collection efficiency " << format_number(*best.collection_efficiency, 4);
      text << ". ";
      if (rec.near_best.size() > 1)
        text << "Within " << format_number(100 * rec.margin, 3) << " % (relative) of the best PCE: "
             << first.path << " from " << rows[rec.near_best.front()].values[0] << " to "
             << with_unit(rows[rec.near_best.back()].values[0], first.unit) << ".";
      else
        text << "No neighbouring " << first.path << " comes within " << format_number(100 * rec.margin, 3)
             << " % of the best PCE; a finer sweep around it shows how sharp the optimum is.";
      if (rec.at_edge && all_numeric(first.values)) // a list of names has no beyond
        text << " The best value lies at the edge of the swept range: extend the sweep beyond it.";
      if (rec.outside_limits > 0)
        text << " " << rec.outside_limits
             << (rec.outside_limits > 1 ? " computed cases lie" : " computed case lies")
             << " outside the fabrication limits (Fabrication/Smallest gap "
             << format_number(plan.fabrication.smallest_gap_um, 6) << " to Largest gap "
             << format_number(plan.fabrication.largest_gap_um, 6) << " um) and "
             << (rec.outside_limits > 1 ? "are" : "is") << " not considered.";
      if (rec.gap_study)
        text << gap_text(plan, rows, rec);
      const auto unfinished = std::count_if(rows.begin(), rows.end(), [](const StudyRow &r) {
        return r.status == Status::failed || r.status == Status::missing;
      });
      if (unfinished > 0)
        text << " " << unfinished << " of " << rows.size()
             << " cases failed or are missing; the recommendation considers only the others.";
      return text.str();
    }
  } // namespace

  Criterion
  deciding_criterion(const std::vector<StudyRow> &rows)
  {
    const bool cell = std::any_of(rows.begin(), rows.end(), [](const StudyRow &r) { return bool(r.PCE_cell); });
    return cell ? Criterion::pce_of_comb_cell : Criterion::pce_per_footprint;
  }

  std::string
  criterion_text(const Criterion criterion)
  {
    switch (criterion)
      {
        case Criterion::pce_per_footprint:
          return "highest PCE per footprint";
        case Criterion::pce_of_comb_cell:
          return "highest PCE of the whole comb cell";
      }
    return "";
  }

  std::optional<double>
  deciding_pce(const Criterion criterion, const StudyRow &row)
  {
    return criterion == Criterion::pce_of_comb_cell ? row.PCE_cell : row.PCE;
  }

  std::optional<double>
  gap_of(const StudyPlan &plan, const StudyRow &row)
  {
    if (row.gap_um)
      return row.gap_um;
    for (std::size_t k = 0; k < plan.entries.size() && k < row.values.size(); ++k)
      if (plan.entries[k].path == gap_path)
        return to_number(row.values[k]);
    return std::nullopt;
  }

  Recommendation
  recommend(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    Recommendation rec;
    rec.criterion = deciding_criterion(rows);
    rec.margin    = plan.fabrication.near_best_percent / 100;
    for (std::size_t i = 0; i < rows.size(); ++i)
      {
        // A case whose results break a physical bound is no candidate,
        // nor one whose gap the patterning cannot make.
        if (rows[i].bound_violations.value_or(0) > 0)
          continue;
        const auto pce = deciding_pce(rec.criterion, rows[i]);
        if (!within_limits(plan, rows[i]))
          {
            rec.outside_limits += pce.has_value();
            continue;
          }
        if (pce && (!rec.valid || *pce > *deciding_pce(rec.criterion, rows[rec.best])))
          rec.best = i, rec.valid = true;
      }
    if (!rec.valid || !(*deciding_pce(rec.criterion, rows[rec.best]) > 0))
      {
        rec.valid = false;
        rec.text  = rec.outside_limits > 0 ? "No recommendation: no case within the fabrication limits (Fabrication/"
                                             "Smallest gap, Largest gap) delivered power."
                                           : "No recommendation: no case delivered power (see the status column).";
        return rec;
      }
    const std::vector<std::size_t> line = line_through(plan, rows, rec.best);
    find_near_best(plan, rows, line, rec);
    rec.gap_study = plan.entries[0].path == gap_path && all_numeric(plan.entries[0].values);
    if (rec.gap_study)
      judge_gaps(plan, rows, line, rec);
    rec.text = recommendation_text(plan, rows, rec);
    return rec;
  }
} // namespace backcomb::study
