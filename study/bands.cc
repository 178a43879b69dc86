#include "study/bands.h"

#include "base/format.h"
#include "study/uncertainty.h"

#include <map>
#include <sstream>

namespace backcomb::study
{
  using json = nlohmann::json;

  namespace
  {
    bool
    has_result(const StudyRow &r)
    {
      return r.status == Status::converged || r.status == Status::partial;
    }

    // "p5" for 5 %, "p2.5" for 2.5 %.
    std::string
    percentile_name(const double percent)
    {
      return "p" + format_number(percent, 6);
    }

    // The frame of a band row: the grid point's identity, no numbers yet.
    StudyRow
    frame_of(const StudyRow &first, const std::size_t with_result)
    {
      StudyRow r;
      r.id       = first.id.substr(0, first.id.rfind("__sample="));
      r.values   = first.values;
      r.pitch_um = first.pitch_um;
      r.gap_um   = first.gap_um;
      r.status   = with_result > 0 ? Status::converged : Status::failed;
      r.reason   = with_result > 0 ? "" : "no sample has a result";
      return r;
    }
  } // namespace

  std::vector<BandPoint>
  band_points(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    const std::size_t      grid = grid_size(plan);
    const double           lo = plan.samples.band_low / 100, hi = plan.samples.band_high / 100;
    std::vector<BandPoint> points(grid);
    for (std::size_t g = 0; g < grid; ++g)
      {
        BandPoint &p = points[g];
        p.values     = rows[g].values;
        for (std::size_t i = g; i < rows.size(); i += grid)
          {
            p.rows.push_back(i);
            ++(has_result(rows[i]) ? p.with_result : p.failed);
          }
        p.median = p.low = p.high = frame_of(rows[g], p.with_result);
        for (const auto &c : columns())
          {
            if (!c.field)
              continue;
            std::vector<double> v;
            for (const auto i : p.rows)
              // A metric counts only from a case with a result; sizes and
              // times also from a failed one (as in the case's own row).
              if (const auto &x = rows[i].*c.field; x && (has_result(rows[i]) || !c.metric))
                v.push_back(*x);
            if (v.empty())
              continue;
            p.median.*c.field = sample_quantile(v, 0.5);
            p.low.*c.field    = sample_quantile(v, lo);
            p.high.*c.field   = sample_quantile(v, hi);
          }
        // The loss parts, for the limiting loss of the median curve.
        std::map<std::string, std::vector<double>> parts;
        for (const auto i : p.rows)
          if (has_result(rows[i]))
            for (const auto &[key, value] : rows[i].loss_parts)
              parts[key].push_back(value);
        for (const auto &[key, v] : parts)
          p.median.loss_parts[key] = sample_quantile(v, 0.5);
      }
    return points;
  }

  std::vector<StudyRow>
  median_rows(const std::vector<BandPoint> &points)
  {
    std::vector<StudyRow> rows;
    for (const auto &p : points)
      rows.push_back(p.median);
    return rows;
  }

  std::string
  bands_csv_text(const StudyPlan &plan, const std::vector<BandPoint> &points)
  {
    const SampleSet   &s  = plan.samples;
    const std::string  lo = percentile_name(s.band_low), hi = percentile_name(s.band_high);
    std::ostringstream csv;
    csv << "# backcomb sweep of " << plan.case_file << " with " << s.count
        << " samples of the uncertain entries; one row per grid point\n"
        << "# NAME_median, NAME_" << lo << ", NAME_" << hi
        << ": sample quantiles over the samples with a value (Hyndman and Fan 1996, definition 7: "
           "x[floor h] + (h - floor h) (x[floor h + 1] - x[floor h]), h = (n - 1) p, 0-based)\n"
        << "# samples_failed: samples whose case at this point failed or is missing (not in the quantiles)\n"
        << "# units and meanings of the columns as in sweep.csv\n";
    for (const auto &e : plan.entries)
      csv << (&e == &plan.entries.front() ? "" : ",") << entry_csv_header(e);
    csv << ",samples,samples_with_result,samples_failed";
    for (const auto &c : columns())
      if (!c.csv_header.empty() && c.field)
        csv << ',' << c.csv_header << "_median," << c.csv_header << '_' << lo << ',' << c.csv_header << '_' << hi;
    csv << '\n';
    for (const auto &p : points)
      {
        for (std::size_t k = 0; k < p.values.size(); ++k)
          csv << (k ? "," : "") << p.values[k];
        csv << ',' << p.rows.size() << ',' << p.with_result << ',' << p.failed;
        for (const auto &c : columns())
          if (!c.csv_header.empty() && c.field)
            csv << ',' << c.csv_text(p.median) << ',' << c.csv_text(p.low) << ',' << c.csv_text(p.high);
        csv << '\n';
      }
    return csv.str();
  }

  json
  bands_json(const StudyPlan &plan, const std::vector<BandPoint> &points)
  {
    const SampleSet &s = plan.samples;
    json             j;
    j["quantile_definition"] = "sample quantile type 7 of R. J. Hyndman and Y. Fan, The American Statistician 50 "
                               "(1996) 361-365 (linear between order statistics, h = (n - 1) p)";
    j["percentiles"]         = {{"low", s.band_low}, {"median", 50}, {"high", s.band_high}};
    j["points"]              = json::array();
    for (const auto &p : points)
      {
        json values = json::object();
        for (std::size_t k = 0; k < plan.entries.size(); ++k)
          values[plan.entries[k].path] = p.values[k];
        json point = {{"values", values},
                      {"samples", p.rows.size()},
                      {"samples_with_result", p.with_result},
                      {"samples_failed", p.failed}};
        for (const auto &[key, row] :
             {std::pair<const char *, const StudyRow *>{"median", &p.median}, {"low", &p.low}, {"high", &p.high}})
          {
            json part = json::object();
            for (const auto &c : columns())
              if (c.field && !c.csv_header.empty())
                part[c.csv_header] = c.json_value(*row);
            point[key] = part;
          }
        j["points"].push_back(point);
      }
    return j;
  }
} // namespace backcomb::study
