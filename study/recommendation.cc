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

    // The line of the plot through the best case, and the contiguous run
    // around it within the tolerance; a failed or missing neighbour ends
    // the run, since nothing is known there.
    void
    find_near_best(const StudyPlan &plan, const std::vector<StudyRow> &rows, Recommendation &rec)
    {
      std::vector<std::size_t> line;
      for (const auto &l : lines_of(plan, rows))
        if (std::find(l.begin(), l.end(), rec.best) != l.end())
          line = l;
      const auto   at    = std::size_t(std::find(line.begin(), line.end(), rec.best) - line.begin());
      const double limit = (1 - near_best_tolerance) * *deciding_pce(rec.criterion, rows[rec.best]);
      auto         near  = [&](std::size_t k) {
        const auto pce = deciding_pce(rec.criterion, rows[line[k]]);
        return pce && *pce >= limit;
      };
      std::size_t lo = at, hi = at;
      while (lo > 0 && near(lo - 1))
        --lo;
      while (hi + 1 < line.size() && near(hi + 1))
        ++hi;
      rec.near_best.assign(line.begin() + long(lo), line.begin() + long(hi) + 1);
      rec.at_edge = line.size() > 1 && (at == 0 || at + 1 == line.size());
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
        text << "Within " << format_number(100 * near_best_tolerance, 3) << " % (relative) of the best PCE: "
             << first.path << " from " << rows[rec.near_best.front()].values[0] << " to "
             << with_unit(rows[rec.near_best.back()].values[0], first.unit) << ".";
      else
        text << "No neighbouring " << first.path << " comes within " << format_number(100 * near_best_tolerance, 3)
             << " % of the best PCE; a finer sweep around it shows how sharp the optimum is.";
      if (rec.at_edge)
        text << " The best value lies at the edge of the swept range: extend the sweep beyond it.";
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

  Recommendation
  recommend(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    Recommendation rec;
    rec.criterion = deciding_criterion(rows);
    for (std::size_t i = 0; i < rows.size(); ++i)
      {
        // A case whose results break a physical bound is no candidate.
        if (rows[i].bound_violations.value_or(0) > 0)
          continue;
        const auto pce = deciding_pce(rec.criterion, rows[i]);
        if (pce && (!rec.valid || *pce > *deciding_pce(rec.criterion, rows[rec.best])))
          rec.best = i, rec.valid = true;
      }
    if (!rec.valid || !(*deciding_pce(rec.criterion, rows[rec.best]) > 0))
      {
        rec.valid = false;
        rec.text  = "No recommendation: no case delivered power (see the status column).";
        return rec;
      }
    find_near_best(plan, rows, rec);
    rec.text = recommendation_text(plan, rows, rec);
    return rec;
  }
} // namespace backcomb::study
