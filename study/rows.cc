#include "study/rows.h"

#include "base/errors.h"
#include "study/layout.h"

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <map>

namespace backcomb::study
{
  namespace fs = std::filesystem;

  namespace
  {
    // A case that stopped before it had a summary: failed.json holds why.
    void
    read_failed(const std::string &file, StudyRow &r)
    {
      r.status = Status::failed;
      try
        {
          const nlohmann::json f = read_json(file);
          r.reason               = f.value("reason", std::string("unknown"));
          r.seconds              = number_at(f, {"seconds"});
        }
      catch (const InputError &e)
        {
          r.reason = e.what();
        }
    }
  } // namespace

  StudyRow
  read_row(const std::string &folder, const StudyCase &c)
  {
    StudyRow r;
    r.id     = c.id;
    r.values = c.values;
    r.sample = c.sample;
    if (std::isfinite(c.pitch_um))
      r.pitch_um = c.pitch_um;
    if (std::isfinite(c.gap_um))
      r.gap_um = c.gap_um;
    const std::string dir = case_folder(folder, c.id);
    if (fs::exists(dir + "/summary.json"))
      {
        nlohmann::json s;
        try
          {
            s = read_json(dir + "/summary.json");
          }
        catch (const InputError &e)
          {
            r.status = Status::failed;
            r.reason = e.what();
            return r;
          }
        // Whose result is it? A summary of another case, of another case
        // text or of another program version is not this case's result:
        // none of its numbers are used, and the case counts as failed, so
        // that merge reports it and the sweep, run again, recomputes it.
        const std::string found = (s.is_object() && s.contains("fingerprint") && s["fingerprint"].is_string())
                                    ? s["fingerprint"].get<std::string>()
                                    : std::string();
        if (found != c.fingerprint)
          {
            r.status  = Status::failed;
            r.foreign = true;
            r.reason  = dir + "/summary.json does not belong to case " + c.id + ": " +
                       (found.empty() ? std::string("it carries no fingerprint (written by hand or by an older backcomb)")
                                      : "its fingerprint " + found + " is not the plan's " + c.fingerprint +
                                          " (another case, case text or program version)") +
                       "; the sweep, run again, recomputes it";
            return r;
          }
        read_summary(s, r);
        if (r.status == Status::failed && r.reason.empty())
          r.reason = "failed without a diagnostic (see " + dir + "/solve.log)";
      }
    else if (fs::exists(dir + "/failed.json"))
      read_failed(dir + "/failed.json", r);
    else
      {
        r.status = Status::missing;
        r.reason = "not computed yet";
      }
    return r;
  }

  std::vector<StudyRow>
  collect_rows(const std::string &folder, StudyPlan &plan)
  {
    plan = read_plan(folder);
    std::vector<StudyRow> rows;
    for (const auto &c : plan.cases)
      rows.push_back(read_row(folder, c));
    return rows;
  }

  std::vector<std::vector<std::size_t>>
  lines_of(const StudyPlan &plan, const std::vector<StudyRow> &rows)
  {
    std::map<std::vector<std::string>, std::size_t> index;
    std::vector<std::vector<std::size_t>>           lines;
    for (std::size_t i = 0; i < rows.size(); ++i)
      {
        // The values of the other --vary entries and of the --in-step
        // entries that move with them (those moving with the first entry
        // change along the line).
        std::vector<std::string> rest;
        for (std::size_t k = 1; k < plan.entries.size(); ++k)
          if (plan.entries[k].in_step_with != plan.entries[0].path)
            rest.push_back(rows[i].values[k]);
        const auto [it, fresh] = index.emplace(rest, lines.size());
        if (fresh)
          lines.emplace_back();
        lines[it->second].push_back(i);
      }
    if (all_numeric(plan.entries[0].values))
      for (auto &line : lines)
        std::stable_sort(line.begin(), line.end(), [&](std::size_t a, std::size_t b) {
          return *to_number(rows[a].values[0]) < *to_number(rows[b].values[0]);
        });
    return lines;
  }

  std::vector<std::size_t>
  line_through(const StudyPlan &plan, const std::vector<StudyRow> &rows, const std::size_t point)
  {
    for (auto &l : lines_of(plan, rows))
      if (std::find(l.begin(), l.end(), point) != l.end())
        return std::move(l);
    return {point};
  }
} // namespace backcomb::study
