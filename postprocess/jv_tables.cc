#include "postprocess/jv_tables.h"

#include "base/format.h"

#include <cmath>
#include <map>
#include <sstream>

namespace backcomb::postprocess
{
  using json = nlohmann::json;

  namespace
  {
    // Biases as map keys: equal to 1e-7 V.
    long
    bias_key(const double v)
    {
      return std::lround(v * 1e7);
    }
  } // namespace

  std::optional<double>
  short_circuit_current(const std::vector<fem::JVPoint> &c)
  {
    for (std::size_t i = 0; i + 1 < c.size(); ++i)
      if (c[i].voltage <= 0 && c[i + 1].voltage >= 0)
        return c[i].current +
               (0 - c[i].voltage) / (c[i + 1].voltage - c[i].voltage) * (c[i + 1].current - c[i].current);
    if (c.size() == 1 && std::abs(c[0].voltage) < 1e-9)
      return c[0].current;
    return std::nullopt;
  }

  json
  metrics_json(const fem::JVMetrics &m, const std::optional<double> &jsc, const std::optional<double> &active_scale,
               const double input_power)
  {
    const auto active = [&](const std::optional<double> &v) {
      return v && active_scale ? json(*v * *active_scale) : json(nullptr);
    };
    if (!m.valid)
      return {{"Jsc_mA_per_cm2", jsc ? json(*jsc) : json(nullptr)},
              {"Voc_V", nullptr},
              {"FF", nullptr},
              {"Pmax_mW_per_cm2", nullptr},
              {"Vmp_V", nullptr},
              {"Jmp_mA_per_cm2", nullptr},
              {"PCE_percent", nullptr},
              {"per_active_area",
               {{"Jsc_mA_per_cm2", active(jsc)},
                {"Pmax_mW_per_cm2", nullptr},
                {"PCE_percent", nullptr}}}};
    json j = {{"Jsc_mA_per_cm2", m.Jsc},   {"Voc_V", m.Voc}, {"FF", m.FF},
              {"Pmax_mW_per_cm2", m.Pmax}, {"Vmp_V", m.Vmp}, {"Jmp_mA_per_cm2", m.Jmp}};
    j["PCE_percent"]     = input_power > 0 ? json(100 * m.Pmax / input_power) : json(nullptr);
    j["per_active_area"] = {
      {"Jsc_mA_per_cm2", active(m.Jsc)},
      {"Pmax_mW_per_cm2", active(m.Pmax)},
      {"PCE_percent", input_power > 0 ? active(100 * m.Pmax / input_power) : json(nullptr)}};
    return j;
  }

  void
  add_points(json &list, const std::string &label, const fem::JVScan &s, const std::vector<double> &grid)
  {
    std::map<long, json> rows;
    for (const double v : grid)
      rows[bias_key(v)] = {
        {"sweep", label}, {"voltage_V", v}, {"current_mA_per_cm2", nullptr}, {"status", "not computed"}};
    for (const auto &p : s.points)
      rows[bias_key(p.jv.voltage)] = {
        {"sweep", label},
        {"voltage_V", p.jv.voltage},
        {"current_mA_per_cm2", p.jv.converged ? json(p.jv.current) : json(nullptr)},
        {"status", p.jv.converged ? "converged" : "failed"}};
    for (auto &[k, r] : rows)
      list.push_back(std::move(r));
  }

  std::string
  jv_csv(const fem::JVScan &light, const fem::JVScan &dark, const double footprint_um,
         const std::vector<JVColumn> &more)
  {
    std::map<long, std::vector<std::string>> rows;
    const std::size_t                        n = 2 + more.size();
    auto row = [&](const double v) -> std::vector<std::string> & {
      auto &r = rows[bias_key(v)];
      r.resize(n);
      return r;
    };
    for (const auto &p : light.points)
      row(p.jv.voltage)[0] = p.jv.converged ? format_number(p.jv.current) : "failed";
    for (const auto &p : dark.points)
      row(p.jv.voltage)[1] = p.jv.converged ? format_number(p.jv.current) : "failed";
    for (std::size_t k = 0; k < more.size(); ++k)
      for (const auto &[v, j] : more[k].points)
        row(v)[2 + k] = format_number(j);
    std::ostringstream csv;
    csv << "# backcomb J-V; current density per footprint (period width " << footprint_um
        << " um), generator convention (positive = delivered)\n";
    csv << "voltage_V,J_light_mA_per_cm2,J_dark_mA_per_cm2";
    for (const auto &c : more)
      csv << ',' << c.name;
    csv << '\n';
    for (const auto &[k, r] : rows)
      {
        csv << format_number(k * 1e-7);
        for (const auto &cell : r)
          csv << ',' << cell;
        csv << '\n';
      }
    return csv.str();
  }
} // namespace backcomb::postprocess
