#include "study/sampled_output.h"

#include "base/format.h"

#include <cmath>
#include <sstream>

namespace backcomb::study
{
  using json = nlohmann::json;

  namespace
  {
    json
    number(const std::optional<double> &v)
    {
      return v && std::isfinite(*v) ? json(*v) : json(nullptr);
    }

    json
    ranking_json(const SensitivityRanking &s)
    {
      json entries = json::array();
      for (std::size_t k = 0; k < s.entries.size(); ++k)
        entries.push_back({{"entry", s.entries[k]}, {"first_order_index", number(s.index[k])}});
      return {{"result", s.result},
              {"varies", s.varies},
              {"samples", s.samples},
              {"classes", s.classes},
              {"ranked", entries}};
    }

    const char *const estimator =
      "first-order variance-based index Var(E[Y|class]) / Var(Y) from the solved samples, each entry's samples in "
      "equal-count classes (E. Plischke, E. Borgonovo, C. L. Smith, Global sensitivity measures from given data, "
      "Eur. J. Oper. Res. 226 (2013) 536-550); classes: round(sqrt(n)), 2 to n/2";
  } // namespace

  json
  sampled_recommendation_json(const StudyPlan &plan, const std::vector<StudyRow> &rows, const SampledRecommendation &r)
  {
    const std::size_t grid = r.share.size();
    json              points = json::array();
    for (std::size_t g = 0; g < grid; ++g)
      {
        json values = json::object();
        for (std::size_t k = 0; k < plan.entries.size(); ++k)
          values[plan.entries[k].path] = rows[g].values[k];
        points.push_back({{"values", values},
                          {"share_within_margin", r.share[g]},
                          {"samples_best_here", r.best_count[g]}});
      }
    json samples = json::array();
    for (std::size_t s = 0; s < r.samples; ++s)
      {
        const Recommendation &rec = r.per_sample[s];
        json                  near = json::array();
        for (const auto g : rec.near_best)
          near.push_back(rows[g].values[0]);
        samples.push_back({{"sample", s},
                           {"counted", bool(r.sample_complete[s])},
                           {"best", rec.valid ? json(rows[rec.best].values[0]) : json(nullptr)},
                           {"within_margin", near},
                           {"choice", number(r.sample_choice[s])},
                           {"PCE_at_recommended_percent", number(r.pce_at_chosen[s])}});
      }
    json j = {{"text", r.text},
              {"method", "per sample: recommend() on that sample's cases (its best and its contiguous run within the "
                         "near-best margin); recommended: the widest gap (or with a cost per gap the cheapest) within "
                         "the margin in at least the confidence share of the counted samples"},
              {"samples", r.samples},
              {"samples_counted", r.complete},
              {"samples_not_counted", r.samples - r.complete},
              {"confidence_relative", r.confidence},
              {"margin_relative", r.margin},
              {"points", points},
              {"per_sample", samples}};
    const auto value = [&](const std::optional<std::size_t> &g) {
      return g ? json(rows[*g].values[0]) : json(nullptr);
    };
    j["recommended"]           = value(r.chosen);
    j["recommended_share"]     = r.chosen ? json(r.share[*r.chosen]) : json(nullptr);
    j["most_often_within"]     = value(r.most_often);
    j["recommended_grid_point"] = r.chosen ? json(*r.chosen) : json(nullptr);
    j["gap_tolerance_check"]    = plan.fabrication.gap_tolerance_um > 0 && r.chosen
                                    ? json{{"tolerance_um", plan.fabrication.gap_tolerance_um},
                                           {"samples_checked", r.tolerance_checked},
                                           {"samples_within_margin", r.tolerance_holds},
                                           {"samples_not_known", r.tolerance_unknown}}
                                    : json(nullptr);
    json neighbours = json::array();
    for (const auto &c : r.neighbours)
      neighbours.push_back({{"grid_point", rows[c.other].values[0]},
                            {"samples_counted", c.counted},
                            {"named_higher", c.named_higher},
                            {"neighbour_higher", c.other_higher},
                            {"separated", c.separated}});
    // The named point (recommended, else most often within the margin)
    // against its neighbours, sample by sample.
    j["neighbours_compared"] = neighbours;
    j["what_sets_the_limit"]    = r.beyond ? json{{"next_gap", rows[*r.beyond].values[0]},
                                                  {"next_gap_share_within_margin", r.share[*r.beyond]},
                                                  {"loss", r.limiting_loss.empty() ? json(nullptr)
                                                                                   : json(r.limiting_loss)},
                                                  {"median_growth_mW_per_cm2", r.limiting_loss.empty()
                                                                                 ? json(nullptr)
                                                                                 : json(r.limiting_growth)}}
                                           : json(nullptr);
    return j;
  }

  json
  sensitivity_json(const SampledRecommendation &r)
  {
    return {{"estimator", estimator},
            {"results", {ranking_json(r.choice_sensitivity), ranking_json(r.pce_sensitivity)}},
            {"file", "sensitivity.csv"}};
  }

  std::string
  sensitivity_csv_text(const SampledRecommendation &r)
  {
    std::ostringstream csv;
    csv << "# " << estimator << "\n"
        << "# rank 1 moves the result most; an empty index: not estimated (the result does not vary, or fewer "
           "than 4 samples)\n"
        << "result,rank,entry,first_order_index,samples,classes\n";
    for (const SensitivityRanking *s : {&r.choice_sensitivity, &r.pce_sensitivity})
      for (std::size_t k = 0; k < s->entries.size(); ++k)
        csv << '"' << s->result << "\"," << k + 1 << ",\"" << s->entries[k] << "\","
            << (std::isfinite(s->index[k]) ? format_number(s->index[k], 6) : std::string()) << ',' << s->samples
            << ',' << s->classes << '\n';
    return csv.str();
  }
} // namespace backcomb::study
