#include "study/columns.h"

#include "base/format.h"
#include "study/layout.h"

#include <algorithm>
#include <cmath>

namespace backcomb::study
{
  using json = nlohmann::json;

  namespace
  {
    // The object at the nested keys `path` of `j`, or nullptr.
    const json *
    node_at(const json &j, const std::vector<std::string> &path)
    {
      const json *node = &j;
      for (const auto &key : path)
        {
          if (!node->is_object() || !node->contains(key))
            return nullptr;
          node = &node->at(key);
        }
      return node;
    }

    // Fingers plus contact resistance of the whole comb cell at its own
    // maximum power point; only where the period's loss split exists.
    std::optional<double>
    electrode_loss(const json &summary)
    {
      if (!node_at(summary, {"losses", "points", "max_power"}))
        return std::nullopt;
      const auto fingers = number_at(summary, {"losses", "electrodes_at_cell_max_power", "fingers"});
      const auto contact = number_at(summary, {"losses", "electrodes_at_cell_max_power", "contact_resistance"});
      if (fingers && contact)
        return *fingers + *contact;
      return std::nullopt;
    }

    // Newton iterations or step halvings of the light and the dark J-V
    // together; a solve that reports neither counts 0.
    std::optional<double>
    newton_total(const json &summary, const std::string &light, const std::string &dark)
    {
      const json *newton = node_at(summary, {"newton"});
      if (!newton || !newton->is_object())
        return std::nullopt;
      return double(unsigned(number_at(*newton, {light}).value_or(0) + number_at(*newton, {dark}).value_or(0)));
    }

    std::optional<double>
    newton_iterations(const json &summary)
    {
      return newton_total(summary, "light_iterations", "dark_iterations");
    }

    std::optional<double>
    step_halvings(const json &summary)
    {
      return newton_total(summary, "light_halvings", "dark_halvings");
    }

    // The number of results outside a physical bound, and of warnings of
    // any kind (0 for a summary without them).
    std::optional<double>
    bound_violations(const json &summary)
    {
      const json *bounds = node_at(summary, {"bounds"});
      double      n      = 0;
      if (bounds && bounds->is_array())
        for (const auto &b : *bounds)
          n += b.is_object() && b.contains("violated") && b["violated"].is_boolean() && b["violated"].get<bool>();
      return n;
    }

    std::optional<double>
    warning_count(const json &summary)
    {
      const json *w = node_at(summary, {"warnings"});
      return (w && w->is_array()) ? double(w->size()) : 0.0;
    }

    // The loss parts of a summary (loss_parts()), those it has.
    std::map<std::string, double>
    read_loss_parts(const json &summary)
    {
      std::map<std::string, double> parts;
      const json *terms = node_at(summary, {"losses", "points", "max_power", "terms"});
      if (terms && terms->is_object())
        {
          const auto term = [&](const std::string &name) { return number_at(*terms, {name}); };
          double     bulk = 0;
          bool       any_bulk = false;
          for (const auto &[name, value] : terms->items())
            if (name.rfind("bulk_", 0) == 0 && value.is_number())
              bulk += value.get<double>(), any_bulk = true;
          if (any_bulk)
            parts["bulk_recombination"] = bulk;
          if (const auto v = term("gap_interface"))
            parts["gap_interface_recombination"] = *v;
          if (const auto v = term("top_surface"))
            parts["top_surface_recombination"] = *v;
          const auto h = term("holes_at_electron_comb"), e = term("electrons_at_hole_comb");
          if (h && e)
            parts["minority_carriers_at_combs"] = *h + *e;
        }
      const std::vector<std::pair<std::string, std::vector<std::string>>> direct = {
        {"film_joule", {"losses", "points", "max_power", "split", "film_joule"}},
        {"comb_extraction", {"losses", "points", "max_power", "split", "contacts"}},
        {"finger_resistance", {"losses", "electrodes_at_cell_max_power", "fingers"}},
        {"contact_resistance", {"losses", "electrodes_at_cell_max_power", "contact_resistance"}}};
      for (const auto &[key, path] : direct)
        if (const auto v = number_at(summary, path))
          parts[key] = *v;
      return parts;
    }

    // A column whose JSON key is its CSV header, read from nowhere yet.
    Column &
    add(std::vector<Column> &table, const std::string &csv_header, const std::string &unit,
        std::optional<double> StudyRow::*field)
    {
      Column c;
      c.csv_header = csv_header;
      c.json_path  = {csv_header};
      c.unit       = unit;
      c.field      = field;
      table.push_back(c);
      return table.back();
    }

    std::vector<Column>
    make_columns()
    {
      std::vector<Column> t;
      const std::string   loss_json = "losses_at_max_power_mW_per_cm2";
      // The pitch comes from the plan (the case as read), not from summary.json.
      add(t, "pitch_um", "um", &StudyRow::pitch_um).not_metric().show("pitch (um)", 1, 1);
      add(t, "footprint_width_um", "um", &StudyRow::footprint_width_um).read({"footprint_width_um"}).not_metric();
      add(t, "active_width_um", "um", &StudyRow::active_width_um).read({"active_width_um"}).not_metric();
      add(t, "collection_efficiency", "", &StudyRow::collection_efficiency)
        .read({"collection_efficiency"})
        .show("collection", 4, 2);
      add(t, "Jsc_mA_per_cm2", "mA/cm^2", &StudyRow::Jsc)
        .read({"metrics", "Jsc_mA_per_cm2"})
        .show("Jsc (mA/cm2)", 3, 4);
      add(t, "Voc_V", "V", &StudyRow::Voc).read({"metrics", "Voc_V"}).show("Voc (V)", 4, 5);
      add(t, "FF", "", &StudyRow::FF).read({"metrics", "FF"}).show("FF", 4, 6);
      add(t, "PCE_percent", "%", &StudyRow::PCE).read({"metrics", "PCE_percent"}).show("PCE (%)", 3, 7);
      add(t, "Jsc_active_mA_per_cm2", "mA/cm^2", &StudyRow::Jsc_active)
        .json_at({"per_active_area", "Jsc_mA_per_cm2"})
        .read({"metrics", "per_active_area", "Jsc_mA_per_cm2"});
      add(t, "PCE_active_percent", "%", &StudyRow::PCE_active)
        .json_at({"per_active_area", "PCE_percent"})
        .read({"metrics", "per_active_area", "PCE_percent"})
        .show("PCE act (%)", 3, 8);
      add(t, "dead_zone_fraction", "", &StudyRow::dead_zone_fraction)
        .read({"dead_zone", "area_fraction"})
        .show("dead zone", 3, 3);
      // A scan with mobile ions (Hysteresis scan section): (Pmax_reverse -
      // Pmax_forward) / Pmax_reverse, fem/ion_scan.h.
      add(t, "hysteresis_index", "", &StudyRow::hysteresis_index).read({"hysteresis_scan", "hysteresis_index"});
      add(t, "loss_recombination_mW_per_cm2", "mW/cm^2", &StudyRow::loss_recombination)
        .json_at({loss_json, "recombination"})
        .read({"losses", "points", "max_power", "split", "recombination"})
        .show("recomb.", 3, 9);
      add(t, "loss_film_joule_mW_per_cm2", "mW/cm^2", &StudyRow::loss_film_joule)
        .json_at({loss_json, "film_joule"})
        .read({"losses", "points", "max_power", "split", "film_joule"})
        .show("Joule", 3, 10);
      add(t, "loss_contacts_mW_per_cm2", "mW/cm^2", &StudyRow::loss_contacts)
        .json_at({loss_json, "contacts"})
        .read({"losses", "points", "max_power", "split", "contacts"})
        .show("contacts", 3, 11);
      add(t, "loss_electrodes_mW_per_cm2", "mW/cm^2", &StudyRow::loss_electrodes)
        .json_at({loss_json, "electrodes"})
        .read(&electrode_loss)
        .show("electr.", 3, 12);
      add(t, "PCE_cell_percent", "%", &StudyRow::PCE_cell)
        .read({"cell", "metrics", "PCE_percent"})
        .show("PCE cell", 3, 13);
      add(t, "series_resistance_ohm_cm2", "ohm cm^2", &StudyRow::series_resistance)
        .read({"series_resistance", "total_ohm_cm2"})
        .show("Rs", 3, 14);
      add(t, "bound_violations", "", &StudyRow::bound_violations)
        .read(&bound_violations)
        .not_metric()
        .count()
        .show("bounds!", 0, 15);
      add(t, "warnings", "", &StudyRow::warnings).read(&warning_count).not_metric().count();
      add(t, "newton_iterations", "", &StudyRow::newton_iterations).read(&newton_iterations).not_metric().count();
      add(t, "step_halvings", "", &StudyRow::step_halvings).read(&step_halvings).not_metric().count();
      // The wall time of the case: in sweep.json only, since it differs
      // from run to run and the CSV is meant to compare byte for byte.
      add(t, "", "s", &StudyRow::seconds).json_at({"seconds"}).read({"timings_s", "total"}).not_metric();
      return t;
    }
  } // namespace

  const std::vector<LossPart> &
  loss_parts()
  {
    static const std::vector<LossPart> parts = {
      {"gap_interface_recombination", "recombination at the gap interface"},
      {"bulk_recombination", "recombination in the absorber"},
      {"top_surface_recombination", "recombination at the top surface"},
      {"minority_carriers_at_combs", "minority carriers lost at the combs"},
      {"film_joule", "the film's resistance (Joule heat)"},
      {"comb_extraction", "carriers crossing the combs"},
      {"finger_resistance", "the fingers' resistance"},
      {"contact_resistance", "the combs' contact resistance"}};
    return parts;
  }

  const std::vector<Column> &
  columns()
  {
    static const std::vector<Column> table = make_columns();
    return table;
  }

  std::vector<const Column *>
  screen_columns()
  {
    std::vector<const Column *> shown;
    for (const auto &c : columns())
      if (c.screen_position > 0)
        shown.push_back(&c);
    std::sort(shown.begin(), shown.end(),
              [](const Column *a, const Column *b) { return a->screen_position < b->screen_position; });
    return shown;
  }

  std::optional<double>
  number_at(const json &j, const std::vector<std::string> &path)
  {
    const json *node = node_at(j, path);
    if (node && node->is_number())
      return node->get<double>();
    return std::nullopt;
  }

  std::optional<double>
  Column::from_summary(const json &summary) const
  {
    if (summary_reader)
      return summary_reader(summary);
    if (summary_path.empty())
      return std::nullopt;
    return number_at(summary, summary_path);
  }

  // Seven significant digits in the CSV: more than the model's accuracy,
  // and the same text from serial, MPI and array-job runs.
  std::string
  Column::csv_text(const StudyRow &row) const
  {
    const std::optional<double> &v = row.*field;
    if (!v)
      return "";
    if (whole)
      return std::to_string(unsigned(*v));
    return std::isfinite(*v) ? format_number(*v, 7) : "";
  }

  json
  Column::json_value(const StudyRow &row) const
  {
    const std::optional<double> &v = row.*field;
    if (!v || !std::isfinite(*v))
      return nullptr;
    return whole ? json(unsigned(*v)) : json(*v);
  }

  std::string
  Column::screen_text(const StudyRow &row) const
  {
    const std::optional<double> &v = row.*field;
    if (!v || !std::isfinite(*v))
      return "-";
    return format_fixed(*v, screen_decimals);
  }

  std::string
  entry_csv_header(const StudyEntry &e)
  {
    return e.unit.empty() ? e.path : e.path + " [" + e.unit + "]";
  }

  std::string
  entry_screen_header(const StudyEntry &e)
  {
    return last_component(e.path) + (e.unit.empty() ? "" : " (" + e.unit + ")");
  }

  void
  read_summary(const json &summary, StudyRow &row)
  {
    // A summary without a status, or with one this program does not write,
    // is a damaged result: the case counts as failed.
    const json *status = node_at(summary, {"status"});
    if (!status)
      row.status = Status::failed;
    else if (const auto s = status->is_string() ? status_from_string(status->get<std::string>()) : std::nullopt)
      row.status = *s;
    else
      {
        row.status = Status::failed;
        row.reason = "summary.json has an unknown status " + status->dump();
      }
    const json *failures = node_at(summary, {"failures"});
    if (failures && failures->is_array() && !failures->empty() && (*failures)[0].is_string())
      row.reason = first_line((*failures)[0].get<std::string>());
    // No failure: the first result outside a physical bound is the reason
    // to look at the row.
    const json *bounds = node_at(summary, {"bounds"});
    if (row.reason.empty() && bounds && bounds->is_array())
      for (const auto &b : *bounds)
        if (b.is_object() && b.value("violated", false) && b.contains("message") && b["message"].is_string())
          {
            row.reason = "outside physical bounds: " + first_line(b["message"].get<std::string>());
            break;
          }
    for (const auto &c : columns())
      if (!c.metric || row.status != Status::failed)
        if (c.summary_reader || !c.summary_path.empty())
          row.*c.field = c.from_summary(summary);
    if (row.status != Status::failed)
      row.loss_parts = read_loss_parts(summary);
  }
} // namespace backcomb::study
