#include "study/measured.h"

#include "base/errors.h"
#include "base/format.h"
#include "base/text.h"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <numeric>
#include <sstream>

namespace backcomb::study
{
  namespace
  {
    std::string
    lower(std::string s)
    {
      std::transform(s.begin(), s.end(), s.begin(), [](unsigned char c) { return char(std::tolower(c)); });
      return s;
    }

    // A number that is the whole of `text`, finite.
    std::optional<double>
    number(const std::string &text)
    {
      if (text.empty())
        return std::nullopt;
      char        *end = nullptr;
      const double v   = std::strtod(text.c_str(), &end);
      if (end != text.c_str() + text.size())
        return std::nullopt;
      return v;
    }

    struct Unit
    {
      const char *name;
      double      factor; // to the internal unit
    };

    // Accepted units of each column, per kind; the first is the internal one.
    const std::map<DataKind, std::pair<std::vector<Unit>, std::vector<Unit>>> &
    units()
    {
      static const std::map<DataKind, std::pair<std::vector<Unit>, std::vector<Unit>>> u{
        {DataKind::light_jv, {{{"V", 1}, {"mV", 1e-3}}, {{"mA/cm2", 1}, {"A/m2", 0.1}, {"A/cm2", 1e3}}}},
        {DataKind::dark_jv, {{{"V", 1}, {"mV", 1e-3}}, {{"mA/cm2", 1}, {"A/m2", 0.1}, {"A/cm2", 1e3}}}},
        {DataKind::eqe, {{{"nm", 1}}, {{"fraction", 1}, {"%", 1e-2}}}},
        {DataKind::voc_vs_light, {{{"suns", 1}, {"mW/cm2", 1e-2}}, {{"V", 1}, {"mV", 1e-3}}}}};
      return u;
    }

    std::string
    unit_list(const std::vector<Unit> &u)
    {
      std::string s;
      for (const auto &x : u)
        s += (s.empty() ? "" : ", ") + std::string(x.name);
      return s;
    }

    double
    unit_factor(const std::vector<Unit> &accepted, const std::string &name, const std::string &where,
                const std::string &value, const char *column)
    {
      std::string n = trim(name);
      if (n == "mA/cm^2")
        n = "mA/cm2";
      for (const auto &u : accepted)
        if (n == u.name)
          return u.factor;
      throw InputError(where, value,
                       std::string("unknown unit '") + n + "' of the " + column + " column; accepted: " +
                         unit_list(accepted));
    }
  } // namespace

  std::string
  kind_name(const DataKind k)
  {
    switch (k)
      {
        case DataKind::light_jv:
          return "light J-V";
        case DataKind::dark_jv:
          return "dark J-V";
        case DataKind::eqe:
          return "EQE";
        case DataKind::voc_vs_light:
          return "Voc vs light";
      }
    return "?";
  }

  MeasuredSet
  read_measured(const std::string &file)
  {
    std::error_code ec;
    if (!std::filesystem::is_regular_file(file, ec))
      throw InputError(file + ": not a readable data file (missing, or not a regular file)");
    std::ifstream in(file);
    if (!in)
      throw InputError(file + ": cannot open the data file for reading");
    std::ostringstream all;
    all << in.rdbuf();
    const std::string text = without_byte_order_mark(all.str());
    require_utf8(text, file, true);

    MeasuredSet s;
    s.text  = text;
    s.file  = file;
    s.label = std::filesystem::path(file).stem().string();
    std::optional<DataKind>    kind;
    std::optional<std::string> columns, sign;
    unsigned                   columns_line = 0;
    bool                       in_data      = false;
    std::vector<double>        xs, ys;
    std::istringstream         lines(text);
    unsigned                   n = 0;
    for (std::string raw; std::getline(lines, raw);)
      {
        ++n;
        const std::string where = file + ":" + std::to_string(n);
        std::string       l     = raw;
        if (const auto hash = l.find('#'); hash != std::string::npos)
          l = l.substr(0, hash);
        l = trim(l);
        if (l.empty())
          continue;
        if (!in_data)
          {
            if (lower(l) == "data")
              {
                in_data = true;
                continue;
              }
            const auto eq = l.find('=');
            if (eq == std::string::npos)
              throw InputError(where, l, "expected 'key = value' or the line 'data' before the numbers");
            const std::string key = lower(trim(l.substr(0, eq))), value = trim(l.substr(eq + 1));
            if (key == "kind")
              {
                for (const DataKind k : {DataKind::light_jv, DataKind::dark_jv, DataKind::eqe, DataKind::voc_vs_light})
                  if (lower(value) == lower(kind_name(k)))
                    kind = k;
                if (!kind)
                  throw InputError(where, value, "unknown kind; one of: light J-V, dark J-V, EQE, Voc vs light");
              }
            else if (key == "columns")
              columns = value, columns_line = n;
            else if (key == "current sign")
              {
                if (lower(value) != "generated positive" && lower(value) != "generated negative")
                  throw InputError(where, value, "current sign is 'generated positive' or 'generated negative'");
                sign = lower(value);
              }
            else if (key == "device")
              {
                if (value.find('=') == std::string::npos || value.find('/') == std::string::npos)
                  throw InputError(where, value, "a device line is 'Section/Name=value', like --set");
                s.device.push_back(value);
              }
            else if (key == "weight" || key == "sigma")
              {
                const auto v = number(value);
                if (!v || !std::isfinite(*v) || !(*v > 0))
                  throw InputError(where, value, key + " must be a finite number > 0");
                if (key == "weight")
                  s.weight = *v;
                else
                  s.sigma = *v;
              }
            else if (key == "label")
              s.label = value;
            else
              throw InputError(where, key,
                               "unknown header key; known: kind, columns, current sign, device, weight, sigma, "
                               "label (then the line 'data')");
            continue;
          }
        std::istringstream row(l);
        std::vector<std::string> fields;
        for (std::string f; row >> f;)
          {
            if (!f.empty() && f.back() == ',')
              f.pop_back();
            if (!f.empty())
              fields.push_back(f);
          }
        if (fields.size() != 2)
          throw InputError(where, l, "a data line holds two numbers, found " + std::to_string(fields.size()) + " fields");
        for (const auto &f : fields)
          {
            const auto v = number(f);
            if (!v)
              throw InputError(where, f, "not a number");
            if (!std::isfinite(*v))
              throw InputError(where, f, "not a finite number (NaN or infinity)");
          }
        xs.push_back(*number(fields[0]));
        ys.push_back(*number(fields[1]));
        s.line.push_back(n);
      }

    if (!kind)
      throw InputError(file + ": no 'kind = ...' line (light J-V, dark J-V, EQE or Voc vs light)");
    s.kind = *kind;
    if (!columns)
      throw InputError(file + ": units missing: add a line 'columns = <unit>, <unit>' (for a " + kind_name(s.kind) +
                       ": " + unit_list(units().at(s.kind).first) + " and " + unit_list(units().at(s.kind).second) +
                       ")");
    const bool jv = s.kind == DataKind::light_jv || s.kind == DataKind::dark_jv;
    if (jv && !sign)
      throw InputError(file + ": state the sign convention of the current: 'current sign = generated positive' "
                              "(J > 0 at short circuit under light) or 'current sign = generated negative'");
    if (!jv && sign)
      throw InputError(file + ": 'current sign' applies only to J-V data, not to " + kind_name(s.kind));
    const auto comma = columns->find(',');
    if (comma == std::string::npos)
      throw InputError(file + ":" + std::to_string(columns_line), *columns, "columns are '<unit>, <unit>'");
    const auto  &accepted = units().at(s.kind);
    const std::string cwhere = file + ":" + std::to_string(columns_line);
    const double fx = unit_factor(accepted.first, columns->substr(0, comma), cwhere, *columns, "first");
    const double fy = unit_factor(accepted.second, columns->substr(comma + 1), cwhere, *columns, "second");
    s.x_unit        = accepted.first.front().name;
    s.y_unit        = accepted.second.front().name;
    if (s.sigma)
      *s.sigma *= fy;
    if (xs.size() < 2)
      throw InputError(file + ": " + std::to_string(xs.size()) + " data point(s); a data set needs at least 2");

    // Strictly monotone first column, in either direction.
    const bool increasing = xs[1] > xs[0];
    for (std::size_t i = 1; i < xs.size(); ++i)
      {
        const std::string where = file + ":" + std::to_string(s.line[i]);
        if (xs[i] == xs[i - 1])
          throw InputError(where, format_number(xs[i]),
                           "duplicate value of the first column (also on line " + std::to_string(s.line[i - 1]) +
                             ")");
        if ((xs[i] > xs[i - 1]) != increasing)
          throw InputError(where, format_number(xs[i]),
                           std::string("the first column is not monotone: it ") +
                             (increasing ? "increased" : "decreased") + " up to line " +
                             std::to_string(s.line[i - 1]));
      }
    std::vector<std::size_t> order(xs.size());
    std::iota(order.begin(), order.end(), 0);
    if (!increasing)
      std::reverse(order.begin(), order.end());
    const double sign_factor = (sign && *sign == "generated negative") ? -1.0 : 1.0;
    std::vector<unsigned> line;
    for (const std::size_t i : order)
      {
        s.x.push_back(fx * xs[i]);
        s.y.push_back(sign_factor * fy * ys[i]);
        line.push_back(s.line[i]);
      }
    s.line = line;

    // Checks of the physics that catch a wrong convention or unit.
    const std::string flip = sign_factor > 0 ? "generated negative" : "generated positive";
    if (s.kind == DataKind::light_jv)
      {
        std::size_t zero = 0;
        for (std::size_t i = 0; i < s.x.size(); ++i)
          if (std::abs(s.x[i]) < std::abs(s.x[zero]))
            zero = i;
        const bool near_zero = std::abs(s.x[zero]) < 0.1;
        if ((near_zero && s.y[zero] < 0) || (!near_zero && s.y.back() > s.y.front()))
          throw InputError(file + ":" + std::to_string(s.line[zero]), format_number(ys[order[zero]]),
                           "under light the generated current is positive near short circuit and falls with "
                           "voltage; these data do the opposite with the declared sign. The sign looks flipped: "
                           "declare 'current sign = " + flip + "'");
      }
    if (s.kind == DataKind::dark_jv && s.x.back() > 0.3)
      {
        const double largest = *std::max_element(s.y.begin(), s.y.end(), [](double a, double b) {
          return std::abs(a) < std::abs(b);
        });
        if (s.y.back() > 0 && s.y.back() == largest)
          throw InputError(file + ":" + std::to_string(s.line.back()), format_number(ys[order.back()]),
                           "in the dark, forward bias injects current against the generated direction (negative "
                           "with generated positive); these data are positive there. The sign looks flipped: "
                           "declare 'current sign = " + flip + "'");
      }
    if (s.kind == DataKind::eqe)
      for (std::size_t i = 0; i < s.y.size(); ++i)
        if (s.y[i] < -0.05 || s.y[i] > 1.05)
          throw InputError(file + ":" + std::to_string(s.line[i]), format_number(ys[order[i]]),
                           "an EQE is between 0 and 1" +
                             std::string(fy == 1 && s.y[i] > 1.05 ? "; the values look like percent: declare "
                                                                     "'columns = nm, %'"
                                                                   : ""));
    if (s.kind == DataKind::voc_vs_light)
      for (std::size_t i = 0; i < s.y.size(); ++i)
        {
          const std::string where = file + ":" + std::to_string(s.line[i]);
          if (!(s.x[i] > 0))
            throw InputError(where, format_number(xs[order[i]]), "a light intensity must be > 0");
          if (!(s.y[i] > 0))
            throw InputError(where, format_number(ys[order[i]]),
                             "an open-circuit voltage is > 0 (generated current positive); a negative one "
                             "suggests the opposite sign convention: write it as positive");
        }
    return s;
  }
} // namespace backcomb::study
