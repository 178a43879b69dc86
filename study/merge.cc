#include "study/merge.h"

#include "base/errors.h"
#include "base/files.h"
#include "base/json_file.h"
#include "base/format.h"
#include "postprocess/plots.h"
#include "postprocess/pvd.h"
#include "postprocess/views.h"
#include "study/bands.h"
#include "study/confidence.h"
#include "study/layout.h"
#include "study/rows.h"
#include "study/sampled_output.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>
#include <map>
#include <sstream>

namespace backcomb::study
{
  using json = nlohmann::json;
  namespace fs = std::filesystem;

  namespace
  {
    constexpr double nan = std::numeric_limits<double>::quiet_NaN();

    std::string
    csv_field(const std::string &s)
    {
      if (s.find_first_of(",\"\n") == std::string::npos)
        return s;
      std::string out = "\"";
      for (const char c : s)
        out += c == '"' ? std::string("\"\"") : c == '\n' ? std::string(" ") : std::string(1, c);
      return out + "\"";
    }

    json
    json_number(const std::optional<double> &v)
    {
      return (v && std::isfinite(*v)) ? json(*v) : json(nullptr);
    }

    // `value` at the nested keys `path` of `j`, creating the objects on the way.
    void
    set_at(json &j, const std::vector<std::string> &path, json value)
    {
      json *node = &j;
      for (std::size_t k = 0; k + 1 < path.size(); ++k)
        node = &(*node)[path[k]];
      (*node)[path.back()] = std::move(value);
    }

    const char *const csv_preamble =
      "# pitch_um: electrode pitch w_e + w_h + 2 gap, the distance between the centres of "
      "neighbouring fingers of the same polarity (twice the simulated period width)\n"
      "# metrics per footprint (the whole period) unless named _active (per active area, "
      "Device/Active area); collection_efficiency = Jsc / (q * generation integrated over the absorber)\n"
      "# dead_zone_fraction: absorber area fraction with collection probability below the "
      "case's threshold (summary.json dead_zone)\n"
      "# hysteresis_index: (Pmax_reverse - Pmax_forward) / Pmax_reverse of the scan with moving ions "
      "(summary.json hysteresis_scan; empty without one)\n"
      "# loss_*: power lost at the maximum power point in mW/cm^2 of footprint (losses.csv of the case "
      "has every term): recombination = bulk + surfaces + minority carriers at the combs, film_joule = "
      "Joule heat of both carriers, contacts = majority carriers crossing the combs; electrodes = "
      "finger and contact resistance of the whole comb cell (Electrodes section) at its maximum power point\n"
      "# PCE_cell_percent: the whole comb cell with its fingers; series_resistance_ohm_cm2: from suns-Voc "
      "against the light J-V at the maximum power point (summary.json series_resistance has the split)\n"
      "# an empty cell means not available: a failed or missing case, or a quantity the case "
      "did not compute\n";

    const char *const screen_notes =
      "\nPCE is per footprint (the whole period); 'PCE act' per active area; collection "
      "efficiency = Jsc / (q * integrated generation);\n'dead zone' = absorber area fraction "
      "with collection probability below the threshold; pitch = w_e + w_h + 2 gap.\n"
      "recomb., Joule, contacts: power lost at the maximum power point (mW/cm2 of footprint) to "
      "recombination,\nto the film's resistance and to carriers crossing the combs; electr.: "
      "fingers and contact resistance of the whole comb cell at its own maximum power point;\n"
      "PCE cell: that cell's PCE; Rs: series resistance (ohm cm2) from suns-Voc. Each case's "
      "losses.csv and losses.svg have every term.\n"
      "Model estimates for comparing designs, only as good as the material parameters.\n";

    // ParaView collections of the cases' field files: one per field bias,
    // indexed by the first varied value (1-D numeric studies) or by the
    // case index in the plan (grids).
    std::vector<std::string>
    write_field_collections(const std::string &folder, const StudyPlan &plan, const std::vector<StudyRow> &rows)
    {
      const bool by_value = axis_count(plan) == 1 && all_numeric(plan.entries[0].values);
      std::map<std::string, std::vector<std::pair<double, std::string>>> by_bias;
      for (std::size_t i = 0; i < rows.size(); ++i)
        {
          // Of a sweep with samples, the cases of sample 0 (one per grid point).
          if (rows[i].sample.value_or(0) != 0 ||
              (rows[i].status != Status::converged && rows[i].status != Status::partial))
            continue;
          json s;
          try
            {
              s = read_json(case_folder(folder, plan.cases[i].id) + "/summary.json");
            }
          catch (const InputError &)
            {
              continue;
            }
          if (!s.contains("fields") || !s["fields"].is_array())
            continue;
          for (const auto &f : s["fields"])
            if (f.contains("bias_V") && f["bias_V"].is_number() && f.contains("file") && f["file"].is_string())
              by_bias[format_fixed(f["bias_V"].get<double>(), 4)].emplace_back(
                by_value ? *to_number(rows[i].values[0]) : double(i),
                "cases/" + rows[i].id + "/" + f["file"].get<std::string>());
        }
      std::vector<std::string> written;
      for (auto &[bias, sets] : by_bias)
        {
          std::stable_sort(sets.begin(), sets.end());
          std::vector<postprocess::PvdDataSet> data_sets;
          for (const auto &[time, file] : sets)
            data_sets.push_back({time, file});
          const std::string name = "sweep-fields_V" + bias + ".pvd";
          postprocess::write_pvd(folder + "/" + name, data_sets);
          written.push_back(name);
        }
      return written;
    }

    // What the ParaView views of the sweep (view_in_paraview.py, written
    // here) step through: one collection per kind of file, the swept value
    // (or the case index of a grid) as time, for the cases that have it.
    json
    write_view_collections(const std::string &folder, const StudyPlan &plan, const std::vector<StudyRow> &rows)
    {
      const bool by_value = axis_count(plan) == 1 && all_numeric(plan.entries[0].values);
      std::vector<postprocess::PvdDataSet> collection, max_power, fingers;
      json                                 cases = json::array(), times = json::array();
      for (std::size_t i = 0; i < rows.size(); ++i)
        {
          if (rows[i].sample.value_or(0) != 0 ||
              (rows[i].status != Status::converged && rows[i].status != Status::partial))
            continue;
          const std::string dir = "cases/" + rows[i].id;
          json              s;
          try
            {
              s = read_json(folder + "/" + dir + "/summary.json");
            }
          catch (const InputError &)
            {
              continue;
            }
          const auto file_of = [&s](const char *key) -> std::string {
            if (s.contains(key) && s[key].is_object() && s[key].contains("file") && s[key]["file"].is_string())
              return s[key]["file"].get<std::string>();
            return "";
          };
          const std::string fc = file_of("collection_map");
          if (fc.empty())
            continue;
          const double time = by_value ? *to_number(rows[i].values[0]) : double(i);
          cases.push_back(dir);
          times.push_back(time);
          collection.push_back({time, dir + "/" + fc});
          if (const std::string mpp = file_of("max_power_fields"); !mpp.empty())
            max_power.push_back({time, dir + "/" + mpp});
          if (fs::exists(folder + "/" + dir + "/fields/fingers.vtp"))
            fingers.push_back({time, dir + "/fields/fingers.vtp"});
        }
      if (collection.empty())
        return nullptr;
      json views = {{"swept_entry", by_value ? plan.entries[0].path : std::string("case index")},
                    {"swept_unit", by_value ? plan.entries[0].unit : std::string("")},
                    {"cases", cases},
                    {"times", times},
                    {"script", postprocess::view_script_name}};
      const auto write = [&](const char *key, const char *name, const std::vector<postprocess::PvdDataSet> &d) {
        // A collection that misses cases would shift the others in time.
        if (d.size() != collection.size())
          {
            views[key] = nullptr;
            return;
          }
        postprocess::write_pvd(folder + "/" + name, d);
        views[key] = name;
      };
      write("collection", "sweep-collection.pvd", collection);
      write("max_power", "sweep-max-power.pvd", max_power);
      write("fingers", "sweep-fingers.pvd", fingers);
      postprocess::write_view_script(folder);
      return views;
    }

    // The plot: the first entry along x, one line per combination of the
    // others, the PCE that decided the recommendation on the upper panel.
    // The axis labels of the plot.
    postprocess::SweepPlotData
    plot_frame(const StudyPlan &plan, const Criterion criterion)
    {
      postprocess::SweepPlotData data;
      if (criterion == Criterion::pce_of_comb_cell)
        data.pce_label = "PCE of the comb cell (%)";
      const std::string unit = plan.entries[0].unit == "um" ? "µm" : plan.entries[0].unit;
      data.x_label           = plan.entries[0].path + (unit.empty() ? "" : " (" + unit + ")");
      // Entries that move with the first one: named on the axis.
      for (std::size_t k = 1; k < plan.entries.size(); ++k)
        if (plan.entries[k].in_step_with == plan.entries[0].path)
          data.x_label += ", with " + last_component(plan.entries[k].path) + " in step";
      return data;
    }

    // Legend text of a line: "Name = value unit" of the other entries, but
    // not of those that move with the first one (along the line).
    std::string
    line_label(const StudyPlan &plan, const StudyRow &row)
    {
      std::string label;
      for (std::size_t k = 1; k < plan.entries.size(); ++k)
        if (plan.entries[k].in_step_with != plan.entries[0].path)
          label += (label.empty() ? "" : ", ") + last_component(plan.entries[k].path) + " = " +
                   with_unit(row.values[k], plan.entries[k].unit);
      return label;
    }

    std::vector<std::string>
    write_plots(const std::string &folder, const StudyPlan &plan, const std::vector<StudyRow> &rows,
                const Recommendation &rec, std::vector<std::string> &warnings)
    {
      postprocess::SweepPlotData data = plot_frame(plan, rec.criterion);
      for (const auto &line : lines_of(plan, rows))
        {
          postprocess::PlotSeries s;
          s.label = line_label(plan, rows[line.front()]);
          for (const auto i : line)
            {
              s.x.push_back(*to_number(rows[i].values[0]));
              s.pce.push_back(deciding_pce(rec.criterion, rows[i]).value_or(nan));
              s.eta.push_back(rows[i].collection_efficiency.value_or(nan));
            }
          data.series.push_back(std::move(s));
        }
      if (rec.valid)
        {
          data.best_x      = to_number(rows[rec.best].values[0]);
          data.best_pce    = deciding_pce(rec.criterion, rows[rec.best]);
          data.range_from  = to_number(rows[rec.near_best.front()].values[0]);
          data.range_to    = to_number(rows[rec.near_best.back()].values[0]);
          data.range_label = "within " + format_number(100 * rec.margin, 3) + " % of the highest PCE";
        }
      return postprocess::write_sweep_plots(data, folder + "/sweep", warnings);
    }

    // The plot of a sweep with samples: per line the median of every grid
    // point, the band around it, the recommended point and the points
    // within the margin in at least the confidence share of the samples.
    std::vector<std::string>
    write_band_plots(const std::string &folder, const StudyPlan &plan, const std::vector<BandPoint> &points,
                     const SampledRecommendation &r, std::vector<std::string> &warnings)
    {
      const Criterion criterion = r.per_sample.empty() ? Criterion::pce_per_footprint : r.per_sample.front().criterion;
      postprocess::SweepPlotData  data = plot_frame(plan, criterion);
      const std::vector<StudyRow> med  = median_rows(points);
      const auto                  x    = [&](std::size_t g) { return *to_number(med[g].values[0]); };
      for (const auto &line : lines_of(plan, med))
        {
          postprocess::PlotSeries s;
          s.label = line_label(plan, med[line.front()]);
          if (s.label.empty())
            s.label = "median of the samples";
          for (const auto g : line)
            {
              s.x.push_back(x(g));
              s.pce.push_back(deciding_pce(criterion, points[g].median).value_or(nan));
              s.pce_low.push_back(deciding_pce(criterion, points[g].low).value_or(nan));
              s.pce_high.push_back(deciding_pce(criterion, points[g].high).value_or(nan));
              s.eta.push_back(points[g].median.collection_efficiency.value_or(nan));
              s.eta_low.push_back(points[g].low.collection_efficiency.value_or(nan));
              s.eta_high.push_back(points[g].high.collection_efficiency.value_or(nan));
            }
          if (r.chosen && std::find(line.begin(), line.end(), *r.chosen) != line.end())
            for (const auto g : line)
              if (r.share[g] >= r.confidence - 1e-12)
                {
                  data.range_from = std::min(data.range_from.value_or(x(g)), x(g));
                  data.range_to   = std::max(data.range_to.value_or(x(g)), x(g));
                }
          data.series.push_back(std::move(s));
        }
      const SampleSet &u = plan.samples;
      data.band_label    = format_number(u.band_low, 3) + "-" + format_number(u.band_high, 3) + " % of samples";
      if (r.chosen)
        {
          data.best_x     = x(*r.chosen);
          data.best_pce   = deciding_pce(criterion, points[*r.chosen].median);
          data.best_label = "recommended";
        }
      data.range_label = "within " + format_number(100 * r.margin, 3) + " % of the best in >= " +
                         format_number(100 * r.confidence, 3) + " % of samples";
      return postprocess::write_sweep_plots(data, folder + "/sweep", warnings);
    }

    // The gap to make and why (a study whose first entry is the gap).
    json
    gap_json(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec)
    {
      const auto gap     = [&](std::size_t i) { return json_number(to_number(rows[i].values[0])); };
      const auto pce     = [&](std::size_t i) { return json_number(deciding_pce(rec.criterion, rows[i])); };
      json       tol     = {{"tolerance_um", plan.fabrication.gap_tolerance_um},
                            {"method", "deciding PCE interpolated linearly between the computed gaps at gap -/+ "
                                       "tolerance"},
                            {"PCE_low_percent", json_number(rec.pce_low)},
                            {"PCE_high_percent", json_number(rec.pce_high)}};
      switch (rec.tolerance)
        {
          case ToleranceCheck::not_asked: tol["result"] = "not asked"; break;
          case ToleranceCheck::holds: tol["result"] = "within the margin"; break;
          case ToleranceCheck::fails: tol["result"] = "outside the margin"; break;
          case ToleranceCheck::not_known: tol["result"] = "not known"; break;
        }
      json inseparable = json::array();
      for (const auto i : rec.inseparable)
        inseparable.push_back(gap(i));
      json limit = nullptr;
      if (rec.beyond)
        {
          limit = {{"next_gap_um", gap(*rec.beyond)},
                   {"next_gap_PCE_percent", pce(*rec.beyond)},
                   {"next_gap_outside_limits", rec.beyond_outside_limits},
                   {"unresolved", rec.limit_unresolved},
                   {"loss", rec.limiting_loss.empty() ? json(nullptr) : json(rec.limiting_loss)},
                   {"growth_mW_per_cm2", rec.limiting_loss.empty() ? json(nullptr) : json(rec.limiting_growth)}};
          json growth = json::object();
          for (const auto &part : loss_parts())
            {
              const auto a = rows[rec.best].loss_parts.find(part.key);
              const auto b = rows[*rec.beyond].loss_parts.find(part.key);
              if (a != rows[rec.best].loss_parts.end() && b != rows[*rec.beyond].loss_parts.end())
                growth[part.key] = b->second - a->second;
            }
          limit["growth_by_loss_mW_per_cm2"] = growth;
        }
      return {{"best_gap_um", gap(rec.best)},
              {"widest_near_best_gap_um", gap(*rec.widest)},
              {"recommended_gap_um", gap(*rec.chosen)},
              {"recommended_case", rows[*rec.chosen].id},
              {"recommended_PCE_percent", pce(*rec.chosen)},
              {"recommended_relative_cost", plan.fabrication.gap_cost.empty()
                                              ? json(nullptr)
                                              : json(plan.fabrication.cost_at(*to_number(rows[*rec.chosen].values[0])))},
              {"gap_tolerance_check", tol},
              {"inseparable_from_best_gap_um", inseparable},
              {"solve_resolution_relative", solve_resolution},
              {"what_sets_the_limit", limit}};
    }

    json
    recommendation_json(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec)
    {
      if (!rec.valid)
        return {{"text", rec.text}};
      const StudyRow &best        = rows[rec.best];
      json            best_values = json::object();
      for (std::size_t k = 0; k < plan.entries.size(); ++k)
        best_values[plan.entries[k].path] = best.values[k];
      json near = json::array();
      for (const auto i : rec.near_best)
        near.push_back(rows[i].id);
      json j = {{"text", rec.text},
              {"best_case", best.id},
              {"best_values", best_values},
              {"PCE_percent", json_number(best.PCE)},
              {"PCE_cell_percent", json_number(best.PCE_cell)},
              {"collection_efficiency", json_number(best.collection_efficiency)},
              {"criterion", criterion_text(rec.criterion)},
              {"tolerance_relative", rec.margin},
              {"near_best_cases", near},
              {"near_best_from", rows[rec.near_best.front()].values[0]},
              {"near_best_to", rows[rec.near_best.back()].values[0]},
              {"best_at_edge_of_range", rec.at_edge}};
      const auto &fab  = plan.fabrication;
      j["fabrication"] = {{"smallest_gap_um", fab.smallest_gap_um},
                          {"largest_gap_um", fab.largest_gap_um},
                          {"gap_tolerance_um", fab.gap_tolerance_um},
                          {"near_best_percent", fab.near_best_percent},
                          {"gap_cost", fab.gap_cost},
                          {"cases_outside_limits", rec.outside_limits}};
      j["gap"] = rec.gap_study ? gap_json(plan, rows, rec) : json(nullptr);
      return j;
    }

    std::map<std::string, std::size_t>
    status_counts(const std::vector<StudyRow> &rows)
    {
      std::map<std::string, std::size_t> counts;
      for (const Status s : {Status::converged, Status::partial, Status::failed, Status::missing})
        counts[to_string(s)] = 0;
      for (const auto &r : rows)
        ++counts[to_string(r.status)];
      return counts;
    }

    void
    print_files(const std::string &folder, const StudyPlan &plan, const std::vector<std::string> &plots,
                const std::vector<std::string> &collections)
    {
      std::printf("\nFiles in %s:\n  sweep.csv, sweep.json: the table above (sweep.json with the "
                  "recommendation)\n",
                  folder.c_str());
      for (const auto &p : plots)
        std::printf("  %s: PCE and collection efficiency vs. %s\n", fs::path(p).filename().c_str(),
                    plan.entries[0].path.c_str());
      for (const auto &c : collections)
        std::printf("  %s: ParaView collection of every case's fields at that bias\n", c.c_str());
      std::printf("  cases/<case>/: each case's own results (jv.csv, summary.json, fields) and solve.log\n");
      if (fs::exists(folder + "/" + postprocess::view_script_name))
        std::printf("  %s: the dead zone of every case in ParaView: paraview --script=%s/%s\n",
                    postprocess::view_script_name, folder.c_str(), postprocess::view_script_name);
    }

    // The exit code of a merge: a failed or missing case first, then a
    // result outside a physical bound.
    int
    merge_exit_code(const std::vector<StudyRow> &rows)
    {
      const auto counts     = status_counts(rows);
      const bool unfinished = counts.at(to_string(Status::failed)) + counts.at(to_string(Status::missing)) > 0;
      const bool violated   = std::any_of(rows.begin(), rows.end(),
                                          [](const StudyRow &r) { return r.bound_violations.value_or(0) > 0; });
      return unfinished ? exit_no_convergence : violated ? exit_bounds : exit_ok;
    }

    int merge_sampled_study(const std::string &folder, const StudyPlan &plan, const std::vector<StudyRow> &rows,
                            bool quiet);
  } // namespace

  std::string
  csv_text(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    std::ostringstream csv;
    csv << "# backcomb sweep of " << plan.case_file << "; one row per case, in the order of sweep-plan.json\n"
        << csv_preamble;
    if (plan.samples.active())
      csv << "# sample: index into sweep-plan.json uncertainty.values; the sampled values follow it "
             "(sweep-bands.csv has the median and the band per grid point)\n";
    csv << "case";
    for (const auto &e : plan.entries)
      csv << ',' << csv_field(entry_csv_header(e));
    if (plan.samples.active())
      {
        csv << ",sample";
        for (const auto &e : plan.samples.entries)
          csv << ',' << csv_field(entry_csv_header({e.path, {}, e.unit}));
      }
    for (const auto &c : columns())
      if (!c.csv_header.empty())
        csv << ',' << c.csv_header;
    csv << ",status,reason\n";
    for (const auto &r : rows)
      {
        csv << csv_field(r.id);
        for (const auto &v : r.values)
          csv << ',' << csv_field(v);
        if (r.sample)
          {
            csv << ',' << *r.sample;
            for (const double v : plan.samples.values[*r.sample])
              csv << ',' << sample_text(v);
          }
        for (const auto &c : columns())
          if (!c.csv_header.empty())
            csv << ',' << c.csv_text(r);
        csv << ',' << to_string(r.status) << ',' << csv_field(r.reason) << '\n';
      }
    return csv.str();
  }

  json
  row_json(const StudyPlan &plan, const StudyRow &r)
  {
    json values = json::object();
    for (std::size_t k = 0; k < plan.entries.size(); ++k)
      values[plan.entries[k].path] = r.values[k];
    json j      = {{"id", r.id}, {"folder", "cases/" + r.id}, {"values", values}};
    if (r.sample)
      {
        json sampled = json::object();
        for (std::size_t k = 0; k < plan.samples.entries.size(); ++k)
          sampled[plan.samples.entries[k].path] = plan.samples.values[*r.sample][k];
        j["sample"]         = *r.sample;
        j["sampled_values"] = sampled;
      }
    for (const auto &c : columns())
      set_at(j, c.json_path, c.json_value(r));
    j["status"] = to_string(r.status);
    j["reason"] = r.reason.empty() ? json(nullptr) : json(r.reason);
    return j;
  }

  namespace
  {
    // What sweep.json holds for every sweep, with or without samples: the
    // plan's entries and one object per case.
    json
    plan_and_cases_json(const StudyPlan &plan, const std::vector<StudyRow> &rows)
    {
      json j;
      j["case_file"] = plan.case_file;
      j["sets"]      = plan.sets;
      j["entries"]   = json::array();
      for (const auto &e : plan.entries)
        j["entries"].push_back({{"path", e.path},
                                {"unit", e.unit},
                                {"values", e.values},
                                {"in_step_with", e.is_axis() ? json(nullptr) : json(e.in_step_with)}});
      j["pitch_definition"] = "w_e + w_h + 2 gap: centre to centre of neighbouring fingers of the same polarity";
      j["counts"]           = status_counts(rows);
      j["cases"]            = json::array();
      for (const auto &r : rows)
        j["cases"].push_back(row_json(plan, r));
      return j;
    }
  } // namespace

  json
  study_json(const StudyPlan &plan, const std::vector<StudyRow> &rows, const Recommendation &rec)
  {
    json j              = plan_and_cases_json(plan, rows);
    j["recommendation"] = recommendation_json(plan, rows, rec);
    return j;
  }

  std::string
  screen_table(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    const std::vector<const Column *> shown = screen_columns();
    std::vector<std::vector<std::string>> table(1);
    for (const auto &e : plan.entries)
      table[0].push_back(entry_screen_header(e));
    for (const Column *c : shown)
      table[0].push_back(c->screen_header);
    table[0].push_back("status");
    for (const auto &r : rows)
      {
        std::vector<std::string> line = r.values;
        for (const Column *c : shown)
          line.push_back(c->screen_text(r));
        line.push_back(to_string(r.status));
        table.push_back(line);
      }
    std::vector<std::size_t> width(table[0].size(), 0);
    for (const auto &line : table)
      for (std::size_t k = 0; k < line.size(); ++k)
        width[k] = std::max(width[k], line[k].size());
    std::string text;
    auto        add_line = [&](const std::vector<std::string> &line) {
      for (std::size_t k = 0; k < line.size(); ++k)
        {
          const std::string pad(width[k] - line[k].size(), ' ');
          // Text left-aligned in the last column, numbers right-aligned.
          text += (k ? " | " : "") + (k + 1 == line.size() ? line[k] + pad : pad + line[k]);
        }
      text += '\n';
    };
    add_line(table[0]);
    std::size_t total = 0;
    for (const auto w : width)
      total += w + 3;
    text += std::string(total - 3, '-') + '\n';
    for (std::size_t i = 1; i < table.size(); ++i)
      add_line(table[i]);
    for (const auto &r : rows)
      if (r.status == Status::failed)
        text += "  " + r.id + " failed: " + r.reason + '\n';
      else if (r.bound_violations.value_or(0) > 0 && !r.reason.empty())
        text += "  " + r.id + " " + r.reason + " (not recommended; its summary.json \"bounds\" has all)\n";
    return text;
  }

  int
  merge_study(const std::string &folder, const bool quiet)
  {
    if (!fs::exists(plan_file(folder)))
      throw InputError(folder + ": no sweep-plan.json here (is this the --out folder of a sweep?)");
    StudyPlan                   plan;
    const std::vector<StudyRow> rows = collect_rows(folder, plan);
    if (plan.samples.active())
      return merge_sampled_study(folder, plan, rows, quiet);
    const Recommendation        rec  = recommend(plan, rows);

    write_file_atomically(folder + "/sweep.csv", csv_text(plan, rows));
    std::vector<std::string> warnings, plots;
    if (all_numeric(plan.entries[0].values))
      plots = write_plots(folder, plan, rows, rec, warnings);
    else
      warnings.push_back("no plot: the values of " + plan.entries[0].path + " are not all numbers");
    const std::vector<std::string> collections = write_field_collections(folder, plan, rows);
    const json                     views       = write_view_collections(folder, plan, rows);

    json j     = study_json(plan, rows, rec);
    j["files"] = {{"table", "sweep.csv"}, {"plots", json::array()}, {"field_collections", collections}};
    for (const auto &p : plots)
      j["files"]["plots"].push_back(fs::path(p).filename().string());
    j["warnings"] = warnings;
    j["views"]    = views;
    write_json_atomically(folder + "/sweep.json", j);

    std::printf("\n%s", screen_table(plan, rows).c_str());
    std::printf("\n%s\n", rec.text.c_str());
    if (!quiet)
      {
        std::printf("%s", screen_notes);
        print_files(folder, plan, plots, collections);
      }
    for (const auto &w : warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    return merge_exit_code(rows);
  }
} // namespace backcomb::study

namespace backcomb::study
{
  namespace
  {
    // merge_study of a sweep with uncertain entries: sweep.csv with one row
    // per case, sweep-bands.csv, sensitivity.csv, the plot with bands, and
    // the table of medians on screen.
    int
    merge_sampled_study(const std::string &folder, const StudyPlan &plan, const std::vector<StudyRow> &rows,
                        const bool quiet)
    {
      const std::vector<BandPoint>  points = band_points(plan, rows);
      const SampledRecommendation   r      = recommend_with_samples(plan, rows, points);
      write_file_atomically(folder + "/sweep.csv", csv_text(plan, rows));
      write_file_atomically(folder + "/sweep-bands.csv", bands_csv_text(plan, points));
      write_file_atomically(folder + "/sensitivity.csv", sensitivity_csv_text(r));
      std::vector<std::string> warnings, plots;
      if (all_numeric(plan.entries[0].values))
        plots = write_band_plots(folder, plan, points, r, warnings);
      else
        warnings.push_back("no plot: the values of " + plan.entries[0].path + " are not all numbers");
      const std::vector<std::string> collections = write_field_collections(folder, plan, rows);
      const json                     views       = write_view_collections(folder, plan, rows);

      json j              = plan_and_cases_json(plan, rows);
      j["uncertainty"]    = plan_to_json(plan)["uncertainty"];
      j["bands"]          = bands_json(plan, points);
      j["recommendation"] = sampled_recommendation_json(plan, rows, r);
      j["sensitivity"]    = sensitivity_json(r);
      j["files"]          = {{"table", "sweep.csv"},
                             {"bands", "sweep-bands.csv"},
                             {"sensitivity", "sensitivity.csv"},
                             {"plots", json::array()},
                             {"field_collections", collections}};
      for (const auto &p : plots)
        j["files"]["plots"].push_back(fs::path(p).filename().string());
      j["warnings"] = warnings;
      j["views"]    = views;
      write_json_atomically(folder + "/sweep.json", j);

      std::printf("\nMedian over %zu samples per grid point (sweep-bands.csv has the %s-%s %% band of every column):\n%s",
                  plan.samples.count, format_number(plan.samples.band_low, 3).c_str(),
                  format_number(plan.samples.band_high, 3).c_str(), screen_table(plan, median_rows(points)).c_str());
      for (const auto &row : rows)
        if (row.status == Status::failed || row.status == Status::missing)
          std::printf("  %s %s: %s\n", row.id.c_str(), to_string(row.status).c_str(), row.reason.c_str());
      std::printf("\n%s\n", r.text.c_str());
      if (!quiet)
        {
          std::printf("%s", screen_notes);
          print_files(folder, plan, plots, collections);
          std::printf("  sweep-bands.csv: median and band of every column per grid point; sensitivity.csv: "
                      "which uncertain entry moves the choice most\n"
                      "  (the ParaView collections hold the cases of sample 0)\n");
        }
      for (const auto &w : warnings)
        std::fprintf(stderr, "backcomb: %s\n", w.c_str());
      return merge_exit_code(rows);
    }
  } // namespace
} // namespace backcomb::study
