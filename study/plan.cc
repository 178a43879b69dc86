#include "study/plan.h"

#include "base/entries.h"
#include "base/errors.h"
#include "base/text.h"
#include "simulator/case_file.h"
#include "study/layout.h"

#include <deal.II/base/parameter_handler.h>

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

    // The --vary entries, checked against the case file and the --set list,
    // with their units.
    std::vector<StudyEntry>
    varied_entries(const std::vector<std::string> &sets, const std::vector<std::string> &vary)
    {
      std::set<std::string> fixed;
      for (const auto &s : sets)
        fixed.insert(split_override(s).first);
      std::vector<StudyEntry> entries;
      for (const auto &v : vary)
        {
          StudyEntry e = parse_vary(v);
          if (!is_case_entry(e.path))
            {
              const std::string why = unknown_entry_reason(e.path);
              throw InputError("--vary " + e.path, e.values.front(),
                               why.empty() ? "unknown entry (print every entry with 'backcomb template')" : why);
            }
          if (fixed.count(e.path))
            throw InputError("--vary " + e.path, e.values.front(), "is also given with --set");
          for (const auto &other : entries)
            if (other.path == e.path)
              throw InputError("--vary " + e.path, e.values.front(), "is given with --vary more than once");
          e.unit = entry_unit(e.path);
          entries.push_back(std::move(e));
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
            c.pitch_um = checked.geometry.electron_finger_width_um + checked.geometry.hole_finger_width_um +
                         2 * checked.geometry.gap_um;
        }
      catch (const InputError &e)
        {
          // read_case names varied entries as "--set"; say where they came from.
          std::string message = e.what();
          for (const auto &entry : plan.entries)
            for (std::size_t at = message.find("--set " + entry.path); at != std::string::npos;
                 at = message.find("--set " + entry.path, at + 1))
              message.replace(at, 5, "--vary");
          throw InputError("grid point " + c.id + ": " + message);
        }
    }

    // Grid point `index` of the cartesian product, the first entry varying
    // fastest.
    StudyCase
    grid_point(const StudyPlan &plan, const std::vector<std::string> &names, const std::size_t index)
    {
      StudyCase c;
      c.overrides      = plan.sets;
      std::size_t rest = index;
      for (std::size_t k = 0; k < plan.entries.size(); ++k)
        {
          const auto &e     = plan.entries[k];
          const auto &value = e.values[rest % e.values.size()];
          rest /= e.values.size();
          c.values.push_back(value);
          c.overrides.push_back(e.path + "=" + value);
          c.id += (k ? "__" : "") + names[k] + "=" + sanitised(value);
        }
      return c;
    }
  } // namespace

  StudyPlan
  make_plan(const std::string &case_file, const std::vector<std::string> &sets, const std::vector<std::string> &vary)
  {
    if (vary.empty())
      throw InputError("--vary", "", "a sweep needs at least one --vary \"Section/Name=values\"");
    StudyPlan plan;
    plan.case_file = case_file;
    plan.sets      = sets;
    // The case with the common overrides: checks the file and the --set
    // list once, with their own messages.
    plan.case_text = read_case(case_file, sets).echo;
    plan.entries   = varied_entries(sets, vary);

    std::size_t total = 1;
    for (const auto &e : plan.entries)
      {
        total *= e.values.size();
        if (total > max_cases)
          throw InputError("--vary", e.path, "the grid has more than 100000 cases");
      }

    const std::vector<std::string> names = folder_names(plan.entries);
    std::set<std::string>          ids;
    for (std::size_t index = 0; index < total; ++index)
      {
        StudyCase c = grid_point(plan, names, index);
        if (c.id.size() > 200 || !ids.insert(c.id).second)
          {
            // Values that differ only in characters a folder name cannot
            // hold: the plan index keeps the names apart.
            c.id = c.id.substr(0, 180) + "__case" + std::to_string(index);
            ids.insert(c.id);
          }
        check_grid_point(plan, c);
        c.fingerprint = result_fingerprint(plan.case_text, c.overrides);
        plan.cases.push_back(std::move(c));
      }
    return plan;
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
      j["entries"].push_back({{"path", e.path}, {"unit", e.unit}, {"values", e.values}});
    j["cases"] = json::array();
    for (const auto &c : plan.cases)
      j["cases"].push_back({{"id", c.id},
                            {"values", c.values},
                            {"overrides", c.overrides},
                            {"pitch_um", std::isfinite(c.pitch_um) ? json(c.pitch_um) : json(nullptr)}});
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
                                  e.at("unit").get<std::string>()});
        for (const auto &c : j.at("cases"))
          {
            StudyCase sc;
            sc.id        = c.at("id").get<std::string>();
            sc.values    = c.at("values").get<std::vector<std::string>>();
            sc.overrides = c.at("overrides").get<std::vector<std::string>>();
            if (c.at("pitch_um").is_number())
              sc.pitch_um = c.at("pitch_um").get<double>();
            sc.fingerprint = result_fingerprint(plan.case_text, sc.overrides);
            plan.cases.push_back(std::move(sc));
          }
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
      return "the number of --vary entries differs";
    for (std::size_t k = 0; k < wanted.entries.size(); ++k)
      if (existing.entries[k].path != wanted.entries[k].path ||
          existing.entries[k].values != wanted.entries[k].values)
        return "the --vary entry " + wanted.entries[k].path + " or its values differ";
    return "";
  }
} // namespace backcomb::study
