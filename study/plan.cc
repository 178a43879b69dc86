#include "study/plan.h"

#include "base/entries.h"
#include "base/errors.h"
#include "base/format.h"
#include "base/text.h"
#include "simulator/case_file.h"
#include "study/layout.h"

#include <deal.II/base/parameter_handler.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <set>
#include <sstream>

namespace backcomb::study
{
  using json = nlohmann::json;
  using namespace backcomb::simulator;

  namespace
  {
    const char *const plan_format = "backcomb sweep plan 1";

    // deal.II's mangling of entry and section names in its JSON output.
    std::string
    mangle(const std::string &s)
    {
      static const char hex[] = "0123456789abcdef";
      std::string       out;
      for (const char c : s)
        if (std::isalnum(static_cast<unsigned char>(c)) && s != "value")
          out += c;
        else
          out += std::string("_") + hex[static_cast<unsigned char>(c) / 16] +
                 hex[static_cast<unsigned char>(c) % 16];
      return out;
    }

    // True when `path` names an entry (not a section) of the case file.
    // Declaring the case once also records every entry's unit, so that
    // entry_unit() answers afterwards.
    bool
    is_case_entry(const std::string &path)
    {
      static json tree;
      if (tree.is_null())
        {
          dealii::ParameterHandler prm;
          declare_case(prm);
          std::ostringstream out;
          prm.print_parameters(out, dealii::ParameterHandler::JSON);
          tree = json::parse(out.str());
        }
      const json *node = &tree;
      for (const auto &part : split(path, '/'))
        {
          if (node->is_object() && node->contains(part))
            node = &(*node)[part];
          else if (node->is_object() && node->contains(mangle(part)))
            node = &(*node)[mangle(part)];
          else
            return false;
        }
      return node->is_object() && node->contains("value");
    }

    // Folder-name-safe text: letters, digits and . + - kept, others '_'.
    std::string
    sanitised(const std::string &s)
    {
      std::string out;
      for (const char c : s)
        out += (std::isalnum(static_cast<unsigned char>(c)) || std::strchr(".+-", c)) ? c : '_';
      return out;
    }

    // One --vary or --in-step entry checked against the case file and the
    // --set list, with its unit.
    StudyEntry
    checked_entry(const std::set<std::string> &fixed, const std::string &option, const std::string &text)
    {
      StudyEntry e = parse_vary(text, option);
      if (!is_case_entry(e.path))
        {
          const std::string why = unknown_entry_reason(e.path);
          throw InputError(option + " " + e.path, e.values.front(),
                           why.empty() ? "unknown entry (print every entry with 'backcomb template')" : why);
        }
      if (fixed.count(e.path))
        throw InputError(option + " " + e.path, e.values.front(), "is also given with --set");
      if (e.path.rfind("Fabrication/", 0) == 0)
        throw InputError(option + " " + e.path, e.values.front(),
                         "the Fabrication section applies to the whole sweep; give it with --set");
      e.unit = entry_unit(e.path);
      return e;
    }

    // The --vary entries in order, each followed by its --in-step entries.
    std::vector<StudyEntry>
    varied_entries(const std::vector<std::string>    &sets,
                   const std::vector<std::string>    &vary,
                   const std::vector<InStepArgument> &in_step)
    {
      std::set<std::string> fixed;
      for (const auto &s : sets)
        fixed.insert(split_override(s).first);
      std::vector<StudyEntry> axes;
      for (const auto &v : vary)
        {
          StudyEntry e = checked_entry(fixed, "--vary", v);
          for (const auto &other : axes)
            if (other.path == e.path)
              throw InputError("--vary " + e.path, e.values.front(), "is given with --vary more than once");
          axes.push_back(std::move(e));
        }
      std::vector<std::vector<StudyEntry>> linked(axes.size());
      for (const auto &arg : in_step)
        {
          StudyEntry        e     = checked_entry(fixed, "--in-step", arg.text);
          const std::string where = "--in-step " + e.path;
          if (arg.after_vary == 0 || arg.after_vary > axes.size())
            throw InputError(where, e.values.front(), "must follow the --vary entry it moves with");
          const StudyEntry &axis = axes[arg.after_vary - 1];
          if (axis.path == e.path)
            throw InputError(where, e.values.front(), "is linked to itself (it is the --vary entry before it)");
          for (const auto &other : axes)
            if (other.path == e.path)
              throw InputError(where, e.values.front(), "is also given with --vary");
          for (const auto &l : linked)
            for (const auto &other : l)
              if (other.path == e.path)
                throw InputError(where, e.values.front(),
                                 "is given with --in-step more than once (linked to " + other.in_step_with + ")");
          if (e.values.size() != axis.values.size())
            throw InputError(where, e.values.front(),
                             "has " + std::to_string(e.values.size()) + " values, but the --vary entry " + axis.path +
                               " it moves with has " + std::to_string(axis.values.size()));
          e.in_step_with = axis.path;
          linked[arg.after_vary - 1].push_back(std::move(e));
        }
      std::vector<StudyEntry> entries;
      for (std::size_t k = 0; k < axes.size(); ++k)
        {
          entries.push_back(std::move(axes[k]));
          for (auto &l : linked[k])
            entries.push_back(std::move(l));
        }
      return entries;
    }

    // Folder names: "Name=value" per entry, joined by "__"; the full path
    // where two entries share a name (e.g. Work function of both contacts).
    std::vector<std::string>
    folder_names(const std::vector<StudyEntry> &entries)
    {
      std::vector<std::string> names;
      for (const auto &e : entries)
        {
          std::size_t same = 0;
          for (const auto &other : entries)
            same += last_component(other.path) == last_component(e.path);
          names.push_back(sanitised(same > 1 ? e.path : last_component(e.path)));
        }
      return names;
    }

    // Reads the case of one grid point, which checks its values, and
    // records its pitch.
    void
    check_grid_point(const StudyPlan &plan, StudyCase &c)
    {
      try
        {
          const Case checked = read_case(plan.case_file, c.overrides);
          if (checked.geometry.layout == geometry::GeometryParameters::Layout::comb_period)
            {
              c.pitch_um = checked.geometry.electron_finger_width_um + checked.geometry.hole_finger_width_um +
                           2 * checked.geometry.gap_um;
              c.gap_um = checked.geometry.gap_um;
            }
        }
      catch (const InputError &e)
        {
          // read_case names varied entries as "--set"; say where they came from.
          std::string message = e.what();
          for (const auto &entry : plan.entries)
            for (std::size_t at = message.find("--set " + entry.path); at != std::string::npos;
                 at = message.find("--set " + entry.path, at + 1))
              message.replace(at, 5, entry.is_axis() ? "--vary" : "--in-step");
          if (c.sample)
            for (std::size_t k = 0; k < plan.samples.entries.size(); ++k)
              {
                const auto &e    = plan.samples.entries[k];
                const auto  from = "--set " + e.path;
                for (std::size_t at = message.find(from); at != std::string::npos; at = message.find(from, at + 1))
                  message.replace(at, from.size(),
                                  "--uncertain " + e.path + " (" + e.distribution + ", sample " +
                                    std::to_string(*c.sample) + " value " +
                                    format_number(plan.samples.values[*c.sample][k]) + ")");
              }
          throw InputError("grid point " + c.id + ": " + message);
        }
    }

    // The sampled entries checked against the case file and the other
    // options, with their units.
    void
    check_sampled_entries(StudyPlan &plan)
    {
      std::set<std::string> seen;
      for (const auto &s : plan.sets)
        seen.insert(split_override(s).first);
      for (const auto &e : plan.entries)
        seen.insert(e.path);
      for (auto &e : plan.samples.entries)
        {
          const std::string option = plan.samples.from.empty() || e.distribution.rfind("fit ", 0) != 0
                                       ? "--uncertain " + e.path
                                       : "--uncertain-from " + plan.samples.from + ": " + e.path;
          if (!is_case_entry(e.path))
            {
              const std::string why = unknown_entry_reason(e.path);
              throw InputError(option, e.distribution,
                               why.empty() ? "unknown entry (print every entry with 'backcomb template')" : why);
            }
          if (e.path.rfind("Fabrication/", 0) == 0)
            throw InputError(option, e.distribution, "the Fabrication section applies to the whole sweep");
          if (!seen.insert(e.path).second)
            throw InputError(option, e.distribution,
                             "is also given with --set, --vary, --in-step or another --uncertain(-from)");
          e.unit = entry_unit(e.path);
        }
    }

    // Case `c` of sample `sample`: its overrides and folder name extended
    // by the sampled values.
    void
    add_sample(const StudyPlan &plan, const std::size_t sample, StudyCase &c)
    {
      c.sample = sample;
      for (std::size_t k = 0; k < plan.samples.entries.size(); ++k)
        c.overrides.push_back(plan.samples.entries[k].path + "=" + sample_text(plan.samples.values[sample][k]));
      const std::size_t digits = std::to_string(plan.samples.count - 1).size();
      std::string       index  = std::to_string(sample);
      c.id += "__sample=" + std::string(digits - index.size(), '0') + index;
    }

    // Grid point `index` of the cartesian product, the first entry varying
    // fastest; an --in-step entry at the position of its --vary entry,
    // which comes before it.
    StudyCase
    grid_point(const StudyPlan &plan, const std::vector<std::string> &names, const std::size_t index)
    {
      StudyCase   c;
      c.overrides      = plan.sets;
      std::size_t rest = index, position = 0;
      for (std::size_t k = 0; k < plan.entries.size(); ++k)
        {
          const auto &e = plan.entries[k];
          if (e.is_axis())
            {
              position = rest % e.values.size();
              rest /= e.values.size();
            }
          const auto &value = e.values[position];
          c.values.push_back(value);
          c.overrides.push_back(e.path + "=" + value);
          c.id += (k ? "__" : "") + names[k] + "=" + sanitised(value);
        }
      return c;
    }
  } // namespace

  std::size_t
  axis_count(const StudyPlan &plan)
  {
    return std::size_t(
      std::count_if(plan.entries.begin(), plan.entries.end(), [](const StudyEntry &e) { return e.is_axis(); }));
  }

  StudyPlan
  make_plan(const std::string                 &case_file,
            const std::vector<std::string>    &sets,
            const std::vector<std::string>    &vary,
            const std::vector<InStepArgument> &in_step,
            const UncertaintyArguments        &uncertainty)
  {
    if (vary.empty())
      throw InputError("--vary", "", "a sweep needs at least one --vary \"Section/Name=values\"");
    StudyPlan plan;
    plan.case_file = case_file;
    plan.sets      = sets;
    // The case with the common overrides: checks the file and the --set
    // list once, with their own messages.
    const Case common = read_case(case_file, sets);
    plan.case_text    = common.echo;
    plan.fabrication  = common.fabrication;
    plan.entries      = varied_entries(sets, vary, in_step);

    std::size_t total = 1;
    for (const auto &e : plan.entries)
      if (e.is_axis())
        {
          total *= e.values.size();
          if (total > max_cases)
            throw InputError("--vary", e.path, "the grid has more than 100000 cases");
        }

    plan.samples = make_samples(uncertainty);
    check_sampled_entries(plan);
    if (plan.samples.active() && total * plan.samples.count > max_cases)
      throw InputError("--samples", std::to_string(plan.samples.count),
                       "the grid times the samples has more than 100000 cases");

    const std::vector<std::string> names = folder_names(plan.entries);
    std::set<std::string>          ids;
    const std::size_t              rounds = plan.samples.active() ? plan.samples.count : 1;
    for (std::size_t sample = 0; sample < rounds; ++sample)
      for (std::size_t index = 0; index < total; ++index)
        {
          StudyCase c = grid_point(plan, names, index);
          if (plan.samples.active())
            add_sample(plan, sample, c);
          if (c.id.size() > 200 || !ids.insert(c.id).second)
            {
              // Values that differ only in characters a folder name cannot
              // hold: the plan index keeps the names apart.
              c.id = c.id.substr(0, 160) + "__case" + std::to_string(plan.cases.size());
              ids.insert(c.id);
            }
          check_grid_point(plan, c);
          c.fingerprint = result_fingerprint(plan.case_text, c.overrides);
          plan.cases.push_back(std::move(c));
        }
    return plan;
  }

  std::size_t
  grid_size(const StudyPlan &plan)
  {
    return plan.samples.active() ? plan.cases.size() / plan.samples.count : plan.cases.size();
  }

  std::string
  sample_text(const double value)
  {
    return format_number(value, 17);
  }

  json
  plan_to_json(const StudyPlan &plan)
  {
    json j;
    j["format"]    = plan_format;
    // The name as given; a byte that is not UTF-8 is written as \xNN (the
    // name is shown, never used to read the file again).
    j["case_file"] = escape_invalid_utf8(plan.case_file);
    j["case_text"] = plan.case_text;
    j["sets"]      = plan.sets;
    j["entries"]   = json::array();
    for (const auto &e : plan.entries)
      {
        json entry = {{"path", e.path}, {"unit", e.unit}, {"values", e.values}};
        if (!e.is_axis())
          entry["in_step_with"] = e.in_step_with;
        j["entries"].push_back(entry);
      }
    const auto number = [](double v) { return std::isfinite(v) ? json(v) : json(nullptr); };
    j["cases"]        = json::array();
    for (const auto &c : plan.cases)
      j["cases"].push_back({{"id", c.id},
                            {"values", c.values},
                            {"overrides", c.overrides},
                            {"pitch_um", number(c.pitch_um)},
                            {"gap_um", number(c.gap_um)}});
    for (std::size_t i = 0; i < plan.cases.size(); ++i)
      if (plan.cases[i].sample)
        j["cases"][i]["sample"] = *plan.cases[i].sample;
    if (plan.samples.active())
      {
        const SampleSet &u = plan.samples;
        json entries       = json::array();
        for (const auto &e : u.entries)
          entries.push_back({{"path", e.path}, {"unit", e.unit}, {"distribution", e.distribution}});
        j["uncertainty"] = {{"entries", entries},
                            {"from", u.from.empty() ? json(nullptr) : json(u.from)},
                            {"samples", u.count},
                            {"sampling", u.method == SamplingMethod::sobol ? "sobol" : "latin"},
                            {"seed", u.seed},
                            {"band_percent", {u.band_low, u.band_high}},
                            {"values", u.values}};
      }
    const auto &f     = plan.fabrication;
    j["fabrication"] = {{"smallest_gap_um", f.smallest_gap_um},
                        {"largest_gap_um", f.largest_gap_um},
                        {"gap_tolerance_um", f.gap_tolerance_um},
                        {"near_best_percent", f.near_best_percent},
                        {"confidence_percent", f.confidence_percent},
                        {"gap_cost", f.gap_cost}};
    return j;
  }

  StudyPlan
  plan_from_json(const json &j, const std::string &file)
  {
    if (!j.is_object() || j.value("format", "") != plan_format)
      throw InputError(file + ": not a backcomb sweep plan");
    try
      {
        StudyPlan plan;
        plan.case_file = j.at("case_file").get<std::string>();
        plan.case_text = j.at("case_text").get<std::string>();
        plan.sets      = j.at("sets").get<std::vector<std::string>>();
        for (const auto &e : j.at("entries"))
          plan.entries.push_back({e.at("path").get<std::string>(),
                                  e.at("values").get<std::vector<std::string>>(),
                                  e.at("unit").get<std::string>(),
                                  e.value("in_step_with", std::string())});
        // A plan written before linked entries and fabrication limits
        // has neither: no link, the default limits.
        if (plan.entries.empty() || !plan.entries.front().is_axis())
          throw InputError(file + ": damaged sweep plan (no --vary entry first)");
        if (j.contains("fabrication"))
          {
            const json &f                         = j.at("fabrication");
            plan.fabrication.smallest_gap_um      = f.at("smallest_gap_um").get<double>();
            plan.fabrication.largest_gap_um       = f.at("largest_gap_um").get<double>();
            plan.fabrication.gap_tolerance_um     = f.at("gap_tolerance_um").get<double>();
            plan.fabrication.near_best_percent    = f.at("near_best_percent").get<double>();
            plan.fabrication.confidence_percent   = f.value("confidence_percent", 90.0);
            plan.fabrication.gap_cost = f.at("gap_cost").get<std::vector<std::pair<double, double>>>();
          }
        if (j.contains("uncertainty"))
          {
            const json &u = j.at("uncertainty");
            SampleSet  &s = plan.samples;
            for (const auto &e : u.at("entries"))
              s.entries.push_back({e.at("path").get<std::string>(), e.at("unit").get<std::string>(),
                                   e.at("distribution").get<std::string>()});
            if (u.at("from").is_string())
              s.from = u.at("from").get<std::string>();
            s.count     = u.at("samples").get<std::size_t>();
            s.method    = u.at("sampling").get<std::string>() == "latin" ? SamplingMethod::latin : SamplingMethod::sobol;
            s.seed      = u.at("seed").get<unsigned long>();
            s.band_low  = u.at("band_percent").at(0).get<double>();
            s.band_high = u.at("band_percent").at(1).get<double>();
            s.values    = u.at("values").get<std::vector<std::vector<double>>>();
            if (s.entries.empty() || s.count == 0 || s.values.size() != s.count)
              throw InputError(file + ": damaged sweep plan (the samples do not match their count)");
            for (const auto &v : s.values)
              if (v.size() != s.entries.size())
                throw InputError(file + ": damaged sweep plan (a sample without a value of every entry)");
          }
        for (const auto &c : j.at("cases"))
          {
            StudyCase sc;
            sc.id        = c.at("id").get<std::string>();
            sc.values    = c.at("values").get<std::vector<std::string>>();
            sc.overrides = c.at("overrides").get<std::vector<std::string>>();
            if (c.at("pitch_um").is_number())
              sc.pitch_um = c.at("pitch_um").get<double>();
            if (c.contains("gap_um") && c.at("gap_um").is_number())
              sc.gap_um = c.at("gap_um").get<double>();
            if (c.contains("sample"))
              sc.sample = c.at("sample").get<std::size_t>();
            sc.fingerprint = result_fingerprint(plan.case_text, sc.overrides);
            plan.cases.push_back(std::move(sc));
          }
        // Samples are the outermost axis: case i belongs to sample
        // i / grid_size, and every case of a sampled plan has its sample.
        const std::size_t n = plan.samples.active() ? plan.samples.count : 1;
        if (plan.samples.active() && (plan.cases.empty() || plan.cases.size() % n != 0))
          throw InputError(file + ": damaged sweep plan (the cases do not fill the samples)");
        for (std::size_t i = 0; i < plan.cases.size(); ++i)
          if (plan.cases[i].sample.has_value() != plan.samples.active() ||
              (plan.samples.active() && *plan.cases[i].sample != i / (plan.cases.size() / n)))
            throw InputError(file + ": damaged sweep plan (case " + std::to_string(i) + " has another sample)");
        return plan;
      }
    catch (const json::exception &e)
      {
        throw InputError(file + ": damaged sweep plan (" + e.what() + ")");
      }
  }

  StudyPlan
  read_plan(const std::string &folder)
  {
    return plan_from_json(read_json(plan_file(folder)), plan_file(folder));
  }

  std::string
  plan_difference(const StudyPlan &existing, const StudyPlan &wanted)
  {
    if (existing.case_text != wanted.case_text)
      return "the case file's text differs";
    if (existing.sets != wanted.sets)
      return "the --set overrides differ";
    if (existing.entries.size() != wanted.entries.size())
      return "the number of --vary and --in-step entries differs";
    for (std::size_t k = 0; k < wanted.entries.size(); ++k)
      {
        const StudyEntry &e = existing.entries[k], &w = wanted.entries[k];
        const std::string option = w.is_axis() ? "--vary" : "--in-step";
        if (e.path != w.path || e.values != w.values)
          return "the " + option + " entry " + w.path + " or its values differ";
        if (e.in_step_with != w.in_step_with)
          return "the " + option + " entry " + w.path + " moves with another entry";
      }
    // The band percentiles are read at the merge only: a new --band is no
    // new plan.
    const SampleSet &a = existing.samples, &b = wanted.samples;
    if (a.active() != b.active())
      return b.active() ? "the old sweep has no uncertain entries" : "the old sweep has uncertain entries";
    if (b.active())
      {
        if (a.entries.size() != b.entries.size())
          return "the number of uncertain entries differs";
        for (std::size_t k = 0; k < b.entries.size(); ++k)
          if (a.entries[k].path != b.entries[k].path || a.entries[k].distribution != b.entries[k].distribution)
            return "the uncertain entry " + b.entries[k].path + " or its distribution differs";
        if (a.count != b.count)
          return "the number of samples differs";
        if (a.method != b.method || a.seed != b.seed)
          return "the sampling method or its seed differs";
        if (a.values != b.values)
          return "the sampled values differ (a changed fit.json?)";
      }
    return "";
  }
} // namespace backcomb::study
