#include "simulator/case_file.h"
#include "simulator/recycling_setup.h"

#include "base/entries.h"
#include "base/format.h"
#include "base/text.h"
#include "simulator/legacy_entries.h"

#include <algorithm>
#include <cctype>
#include <cstdlib>
#include <map>
#include <cmath>
#include <filesystem>
#include <iomanip>
#include <fstream>
#include <set>
#include <sstream>

namespace backcomb::simulator
{
  namespace
  {
    // Interlayers default to wide-gap transport layers; the absorber to a
    // generic intrinsic perovskite-type film. These defaults are the
    // template a user edits, not measured data.
    fem::Material
    interlayer_defaults(const bool electron)
    {
      fem::Material m;
      m.band_gap          = 3.2;
      m.electron_affinity = electron ? 4.0 : 2.3;
      m.permittivity      = 10;
      m.mu_n = m.mu_p     = 1e-3;
      m.donors            = electron ? 1e18 : 0;
      m.acceptors         = electron ? 0 : 1e18;
      return m;
    }

    fem::ContactParameters
    contact_defaults(const bool electron)
    {
      fem::ContactParameters c;
      c.work_function = electron ? 4.0 : 5.4;
      c.S_n           = electron ? 1e7 : 10;
      c.S_p           = electron ? 10 : 1e7;
      return c;
    }

    // Line of "set <name>" inside the section path of `file`, or 0.
    unsigned
    find_line(const std::string &text, const std::string &path)
    {
      const auto  slash = path.rfind('/');
      if (slash == std::string::npos)
        return 0;
      const std::string name = path.substr(slash + 1);
      std::vector<std::string> want, stack;
      std::stringstream p(path.substr(0, slash));
      for (std::string s; std::getline(p, s, '/');)
        want.push_back(s);
      std::istringstream in(text);
      unsigned           no = 0;
      for (std::string line; std::getline(in, line);)
        {
          ++no;
          std::istringstream w(line);
          std::string        key;
          w >> key;
          if (key == "subsection")
            {
              std::string rest;
              std::getline(w, rest);
              rest.erase(0, rest.find_first_not_of(" \t"));
              rest.erase(rest.find_last_not_of(" \t\r") + 1);
              stack.push_back(rest);
            }
          else if (key == "end" && !stack.empty())
            stack.pop_back();
          else if (key == "set" && stack == want)
            {
              std::string rest;
              std::getline(w, rest);
              const auto eq = rest.find('=');
              std::string n = rest.substr(0, eq);
              n.erase(0, n.find_first_not_of(" \t"));
              n.erase(n.find_last_not_of(" \t") + 1);
              if (n == name)
                return no;
            }
        }
      return 0;
    }
    // deal.II's ParameterHandler reads a line "include <file>" by parsing
    // that file in place, recursively and without a limit: a case file that
    // includes itself overflows the stack, and an include of /dev/zero or
    // /dev/stdin never ends. backcomb neither uses nor documents the
    // directive, so it is refused before deal.II sees the text. The test
    // errs on the safe side: each physical line, and each line joined with
    // its backslash continuations, is checked after removing the comment.
    void
    refuse_include(const std::string &text, const std::string &file)
    {
      const auto is_include = [](std::string line) {
        line = line.substr(0, line.find('#'));
        const auto first = line.find_first_not_of(" \t\r");
        if (first == std::string::npos)
          return false;
        line.erase(0, first);
        std::string word = line.substr(0, 8);
        for (char &ch : word)
          ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
        return word == "include " || word == "include\t";
      };
      const auto check = [&](const std::string &line, const unsigned no) {
        if (is_include(line))
          throw InputError(file + ":" + std::to_string(no) + ": '" +
                           line.substr(0, line.find_last_not_of(" \t\r") + 1) +
                           "': 'include' lines are not supported (an included file is read "
                           "without a depth limit); put every entry into the case file itself");
      };
      std::istringstream in(text);
      std::string        joined;
      unsigned           no = 0, joined_from = 1;
      for (std::string line; std::getline(in, line);)
        {
          ++no;
          const auto last      = line.find_last_not_of(" \t\r");
          const bool continued = last != std::string::npos && line[last] == '\\';
          joined += continued ? line.substr(0, last) : line;
          check(line, no);
          if (!continued)
            {
              check(joined, joined_from);
              joined.clear();
              joined_from = no + 1;
            }
        }
      check(joined, joined_from);
    }

    std::vector<std::string>
    split(const std::string &text, const char separator)
    {
      std::vector<std::string> parts;
      std::stringstream        in(text);
      for (std::string part; std::getline(in, part, separator);)
        parts.push_back(part);
      return parts;
    }

    // Levenshtein distance of the lower-case forms (V. I. Levenshtein,
    // Soviet Physics Doklady 10 (1966) 707).
    std::size_t
    edit_distance(const std::string &a, const std::string &b)
    {
      const auto lower = [](char ch) { return std::tolower(static_cast<unsigned char>(ch)); };
      std::vector<std::size_t> row(b.size() + 1);
      for (std::size_t j = 0; j <= b.size(); ++j)
        row[j] = j;
      for (std::size_t i = 1; i <= a.size(); ++i)
        {
          std::size_t diagonal = row[0];
          row[0]               = i;
          for (std::size_t j = 1; j <= b.size(); ++j)
            {
              const std::size_t up = row[j];
              row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (lower(a[i - 1]) != lower(b[j - 1]))});
              diagonal = up;
            }
        }
      return row[b.size()];
    }

    // The declared sections and entries: for each section path ("" for the
    // top level, "Absorber/Transport" for a subsection) its entry names and
    // its subsection names, read from the annotated template.
    struct Declared
    {
      std::map<std::string, std::vector<std::string>> entries, sections;
    };

    const Declared &
    declared_names()
    {
      static const Declared d = [] {
        Declared           out;
        std::istringstream in(default_case_text());
        std::vector<std::string> stack;
        const auto path = [&stack] {
          std::string p;
          for (const auto &s : stack)
            p += (p.empty() ? "" : "/") + s;
          return p;
        };
        for (std::string line; std::getline(in, line);)
          {
            std::istringstream w(line);
            std::string        key, rest;
            w >> key;
            std::getline(w, rest);
            rest = trim(rest);
            if (key == "subsection")
              {
                out.sections[path()].push_back(rest);
                stack.push_back(rest);
              }
            else if (key == "end" && !stack.empty())
              stack.pop_back();
            else if (key == "set")
              out.entries[path()].push_back(trim(rest.substr(0, rest.find('='))));
          }
        return out;
      }();
      return d;
    }

    // The section path in force at line `line_no` of `text`.
    std::string
    section_at(const std::string &text, const unsigned line_no)
    {
      std::vector<std::string> stack;
      std::istringstream       in(text);
      unsigned                 no = 0;
      for (std::string line; std::getline(in, line) && ++no < line_no;)
        {
          std::istringstream w(line);
          std::string        key, rest;
          w >> key;
          std::getline(w, rest);
          if (key == "subsection")
            stack.push_back(trim(rest.substr(0, rest.find('#'))));
          else if (key == "end" && !stack.empty())
            stack.pop_back();
        }
      std::string p;
      for (const auto &s : stack)
        p += (p.empty() ? "" : "/") + s;
      return p;
    }

    // " (did you mean 'A' or 'B'?)" with the names closest to `word`, or a
    // pointer to the template when none is close.
    std::string
    nearest_names(const std::string &word, const std::vector<std::string> &candidates, const std::string &kind)
    {
      std::vector<std::pair<std::size_t, std::string>> ranked;
      for (const auto &c : candidates)
        ranked.emplace_back(edit_distance(word, c), c);
      std::stable_sort(ranked.begin(), ranked.end(),
                       [](const auto &a, const auto &b) { return a.first < b.first; });
      const std::size_t limit = std::max<std::size_t>(2, word.size() / 3);
      std::vector<std::string> close;
      for (const auto &[d, c] : ranked)
        if (d <= limit && close.size() < 3)
          close.push_back("'" + c + "'");
      if (close.empty())
        {
          std::string all;
          for (std::size_t i = 0; i < candidates.size() && i < 12; ++i)
            all += (i ? ", '" : "'") + candidates[i] + "'";
          if (candidates.size() > 12)
            all += ", ...";
          return candidates.empty() ? std::string(" (print every entry with 'backcomb template')")
                                    : " (" + kind + ": " + all + ")";
        }
      std::string text = " (did you mean ";
      for (std::size_t i = 0; i < close.size(); ++i)
        text += (i == 0 ? "" : i + 1 == close.size() ? " or " : ", ") + close[i];
      return text + "?)";
    }

    // "; allowed values: 'a', 'b'" for a message that names a Selection
    // pattern ("[Selection a|b ]"), "" otherwise.
    std::string
    allowed_values(const std::string &message)
    {
      const std::string marker = "[Selection ";
      const auto        a      = message.find(marker);
      if (a == std::string::npos)
        return "";
      const auto b = message.find(']', a);
      if (b == std::string::npos)
        return "";
      std::string list;
      for (const auto &v : split(trim(message.substr(a + marker.size(), b - a - marker.size())), '|'))
        list += (list.empty() ? "'" : ", '") + trim(v) + "'";
      return "; allowed values: " + list;
    }

    // deal.II's message for an unknown entry or section, with the nearest
    // declared names; other messages unchanged.
    std::string
    with_suggestion(const std::string &message, const std::string &text)
    {
      const auto between = [&message](const std::string &before, std::size_t from = 0) {
        const auto a = message.find(before, from);
        if (a == std::string::npos)
          return std::string();
        const auto b = message.find('>', a + before.size());
        return b == std::string::npos ? std::string() : message.substr(a + before.size(), b - a - before.size());
      };
      const std::string line_text = between("Line <");
      const unsigned    line_no   = line_text.empty() ? 0 : unsigned(std::strtoul(line_text.c_str(), nullptr, 10));
      const std::string section   = section_at(text, line_no);
      const Declared   &d         = declared_names();
      const std::string entry     = between("No entry with name <");
      if (!entry.empty())
        {
          const auto it = d.entries.find(section);
          return message + nearest_names(entry, it == d.entries.end() ? std::vector<std::string>() : it->second,
                                         "entries of section '" + section + "'");
        }
      const std::string marker = "no such subsection to be entered: ";
      const auto        at     = message.find(marker);
      if (at != std::string::npos)
        {
          // deal.II names it with its path, the levels joined by '.'.
          std::string       wanted = trim(message.substr(at + marker.size()));
          std::string       dotted = section;
          std::replace(dotted.begin(), dotted.end(), '/', '.');
          if (!dotted.empty() && wanted.rfind(dotted + ".", 0) == 0)
            wanted = wanted.substr(dotted.size() + 1);
          // The section path before this line, without the unknown one.
          const auto it = d.sections.find(section);
          return message + nearest_names(wanted, it == d.sections.end() ? std::vector<std::string>() : it->second,
                                         section.empty() ? "top-level sections" : "subsections of '" + section + "'");
        }
      return message + allowed_values(message);
    }

    // Characters that look like a blank or like nothing, which editors and
    // copies from documents put into text, and which deal.II would report
    // as an unparsable line or a strange name: refused with their place
    // outside comments.
    void
    refuse_invisible_characters(const std::string &text, const std::string &file)
    {
      const std::pair<const char *, const char *> invisible[] = {{"\xC2\xA0", "U+00A0 no-break space"},
                                                                 {"\xE2\x80\x8B", "U+200B zero-width space"},
                                                                 {"\xE2\x80\x8C", "U+200C zero-width non-joiner"},
                                                                 {"\xE2\x80\x8D", "U+200D zero-width joiner"},
                                                                 {"\xE2\x81\xA0", "U+2060 word joiner"},
                                                                 {"\xEF\xBB\xBF", "U+FEFF byte order mark"}};
      std::istringstream in(text);
      unsigned           no = 0;
      for (std::string line; std::getline(in, line);)
        {
          ++no;
          const std::string code = line.substr(0, line.find('#'));
          for (const auto &[bytes, name] : invisible)
            if (const auto at = code.find(bytes); at != std::string::npos)
              throw InputError(file + ":" + std::to_string(no) + ": an invisible character (" + name +
                               ") at byte " + std::to_string(at + 1) +
                               " of the line; delete it or replace it with a normal space");
        }
    }

    // Checks that need entries of several sections.
    void
    check_consistency(const Case &c, dealii::ParameterHandler &prm)
    {
      // Surface traps lie inside the absorber's gap.
      for (const auto &[name, surface] :
           {std::pair<std::string, const fem::SurfaceParameters *>{"Top surface", &c.top_surface},
            {"Gap interface", &c.gap_interface}})
        if (!(std::abs(surface->trap_level) < 0.5 * c.absorber.band_gap))
          {
            prm.enter_subsection(name);
            const std::string v = prm.get("Trap level");
            prm.leave_subsection();
            throw InputError(name + "/Trap level", v,
                             "must lie inside the absorber's gap: |level| < Absorber/Bands and permittivity/Band gap / 2 = " +
                               std::to_string(0.5 * c.absorber.band_gap) + " eV");
          }
      // The intrinsic density must stay representable: n_i^2 =
      // Nc Nv exp(-Eg/kT) underflows for wide gaps at low temperature.
      const double kT = fem::thermal_voltage(c.device.temperature);
      for (const auto &[name, m] : {std::pair<std::string, const fem::Material *>{"Absorber", &c.absorber},
                                    {"Electron interlayer", &c.electron_interlayer},
                                    {"Hole interlayer", &c.hole_interlayer}})
        {
          const double ln_ni2 = std::log(m->Nc * m->Nv) - m->band_gap / kT;
          if (ln_ni2 < -600)
            throw InputError("Device/Temperature", std::to_string(c.device.temperature) + " K",
                             "too low for " + name + "/Bands and permittivity/Band gap = " + std::to_string(m->band_gap) +
                               " eV: E_g/kT = " + std::to_string(m->band_gap / kT) +
                               " makes the intrinsic density underflow");
        }
      // Photons travel in the absorber only.
      for (const auto &[name, m] : {std::pair<std::string, const fem::Material *>{"Electron interlayer", &c.electron_interlayer},
                                    {"Hole interlayer", &c.hole_interlayer}})
        if (m->recycling_transport || m->B_from_absorption)
          throw InputError(name + "/Recombination/Radiative/" +
                             (m->recycling_transport ? "Photon recycling" : "Coefficient from absorption"),
                           m->recycling_transport ? "transport" : "true", "applies to the Absorber only");
      // Mobile ions live in the absorber: blocking at every boundary of it,
      // with their steady state tied over one connected region.
      for (const auto &[name, m] : {std::pair<std::string, const fem::Material *>{"Electron interlayer", &c.electron_interlayer},
                                    {"Hole interlayer", &c.hole_interlayer}})
        if (m->ion_density > 0)
          throw InputError(name + "/" + fem::mobile_ions_subsection + "/Density", default_text(m->ion_density),
                           "mobile ions apply to the Absorber only");
      // Refuse meshes too large for memory before anything is allocated.
      // Estimate: the uniform parts plus the graded parts at each refined
      // line (about 4 kB of memory per cell with the direct solver: a
      // measured order of magnitude, not a bound).
      const auto  &g = c.geometry;
      const auto  &m = c.mesh;
      const bool   strip  = g.layout == geometry::GeometryParameters::Layout::test_strip;
      const double width  = strip ? g.strip_length_um : g.width_um();
      const double graded = std::log(std::max(2.0, 1000 * m.largest_lateral_cell_um / m.smallest_cell_nm)) /
                            std::log(m.growth_ratio) + 1;
      const double nx = width / m.largest_lateral_cell_um + 6 * graded;
      const double graded_y = std::log(std::max(2.0, m.largest_vertical_cell_nm / m.smallest_cell_nm)) /
                              std::log(m.growth_ratio) + 1;
      const double ny    = 1000 * g.absorber_thickness_um / m.largest_vertical_cell_nm + 3 * graded_y;
      const double cells = nx * ny;
      constexpr double limit = 1e6;
      if (cells > limit)
        {
          std::ostringstream r;
          r << "the mesh would have about " << std::setprecision(3) << cells << " cells (~"
            << cells * 4e3 / 1e9 << " GB); the limit is " << limit
            << " cells: use fewer cells (larger Mesh/Largest lateral cell or Largest vertical cell) "
               "or a smaller geometry";
          const std::string entry = strip ? "Strip length" : "Gap";
          prm.enter_subsection("Geometry");
          const std::string text = prm.get(entry);
          prm.leave_subsection();
          throw InputError("Geometry/" + entry, text, r.str());
        }
    }
  } // namespace

  namespace
  {
    // The entries of sections "Device", "J-V scan" and "Output", each
    // described once; declare_case() declares them and read_case() checks
    // them against the same ranges.
    const DeviceSettings device_defaults;
    const JVSettings     jv_defaults;
    const OutputSettings output_defaults;
    const HysteresisScanSettings hysteresis_defaults;

    const NumberEntry temperature{"Temperature", device_defaults.temperature, "K",
                                  Range::closed(100, 1000), "Device temperature"};

    // Biases are applied to the hole comb against the electron comb.
    const Range       bias_range = Range::closed(-5, 5);
    const NumberEntry start_voltage{"Start voltage", jv_defaults.start, "V", bias_range,
                                    "First bias of the scan (hole comb against electron comb)"};
    const NumberEntry stop_voltage{"Stop voltage", jv_defaults.stop, "V", bias_range,
                                   "Last bias of the scan; larger than the start voltage"};
    const NumberEntry voltage_step{"Voltage step", jv_defaults.step, "V", Range::closed(1e-4, 1),
                                   "Bias step of the scan (at most 20000 biases)"};
    const NumberEntry mpp_resolution{
      "Maximum power point resolution", jv_defaults.refine_to, "V", Range::closed(1e-5, 1),
      "Bias step to which the scan is refined around the maximum power point"};
    const NumberListEntry suns_voc_intensities{
      "Suns-Voc intensities", "1, 0.3, 0.1, 0.03, 0.01, 0.003, 0.001", "",
      Range::above(0, 1), 50,
      "Light levels, as fractions of the Illumination intensity, at which the open-circuit "
      "voltage is found for the suns-Voc pseudo J-V and the series resistance"};

    // Section "Hysteresis scan": a J-V scan at a finite rate with the
    // absorber's mobile ions moving during it.
    const std::string hysteresis = "Hysteresis scan";
    const NumberEntry scan_rate{
      "Scan rate", hysteresis_defaults.rate, "V/s", Range::closed(0, 1e6),
      "Rate of a J-V scan over the biases of the J-V scan section with the absorber's mobile ions moving "
      "(0: none; needs Absorber/Mobile ions/Density > 0). The other metrics keep the ions' steady state"};
    const NumberEntry preconditioning_bias{
      "Preconditioning bias", hysteresis_defaults.precondition_bias, "V", bias_range,
      "Bias held under the light before the scan, starting from the ions' steady state in the dark at 0 V"};
    const NumberEntry preconditioning_time{"Preconditioning time", hysteresis_defaults.precondition_time, "s",
                                           Range::closed(0, 1e7), "How long the preconditioning bias is held"};
    const NumberEntry step_tolerance{
      "Time step tolerance", hysteresis_defaults.tolerance, "kT/q", Range::closed(1e-4, 1),
      "Largest local error of a time step in the ions' electrochemical potential (smaller: more steps)"};
    const NumberEntry snapshots{"Snapshots per direction", double(hysteresis_defaults.snapshots), "",
                                Range::whole_numbers(0, 1000),
                                "Ion-density fields written at this many evenly spaced biases of each direction"};

    const NumberEntry dead_zone_threshold{
      "Dead zone threshold", output_defaults.dead_zone_threshold, "", Range::open(0, 1),
      "Collection probability below which absorber is counted as dead zone (at short "
      "circuit)"};
    const NumberListEntry field_biases{
      "Field biases", "0", "V", bias_range, 1000,
      "Biases at which the fields are written; each within the J-V scan"};
    const NumberListEntry power_balance_biases{
      "Power balance biases", "", "V", bias_range, 1000,
      "Biases (within the J-V scan) at which the power balance is reported besides short "
      "circuit, maximum power point and open circuit"};

    // Section "Fabrication": read only by a sweep's recommendation, which
    // applies the limits to Geometry/Gap.
    const FabricationSettings fabrication_defaults;
    const std::string         fabrication = "Fabrication";
    const NumberEntry         smallest_gap{
      "Smallest gap", fabrication_defaults.smallest_gap_um, "um", Range::closed(0, 10000),
      "Narrowest gap between the fingers that the patterning process makes; a sweep recommends no "
      "narrower gap (0: no lower limit)"};
    const NumberEntry largest_gap{
      "Largest gap", fabrication_defaults.largest_gap_um, "um", Range::above(0, 10000),
      "Widest gap between the fingers that the patterning process makes; a sweep recommends no wider "
      "gap (the default sets no practical limit); not below Smallest gap"};
    const NumberEntry gap_tolerance{
      "Gap tolerance", fabrication_defaults.gap_tolerance_um, "um", Range::closed(0, 1000),
      "The made gap lies within the drawn gap +/- this; a sweep checks that the PCE stays within the "
      "near-best margin over that interval (0: not checked)"};
    const NumberEntry near_best_margin{
      "Near-best margin", fabrication_defaults.near_best_percent, "%", Range::above(0, 50),
      "A sweep's preference: the widest gap whose PCE lies within this relative margin of the best PCE"};
    const NumberEntry confidence{
      "Confidence", fabrication_defaults.confidence_percent, "%", Range::above(0, 100),
      "A sweep with uncertain entries recommends the widest gap that lies within the near-best margin of "
      "each sample's best PCE in at least this share of the samples"};

    // "5:3, 20:1.5, 50:1": gap (um) and relative cost pairs, gaps
    // increasing.
    std::vector<std::pair<double, double>>
    parse_gap_cost(const std::string &text)
    {
      const std::string                      path = fabrication + "/Cost per gap";
      std::vector<std::pair<double, double>> pairs;
      if (trim(text).empty())
        return pairs;
      for (const auto &item : split(text, ','))
        {
          const auto colon = item.find(':');
          char      *end_gap = nullptr, *end_cost = nullptr;
          const std::string gap_text  = trim(item.substr(0, colon));
          const std::string cost_text = colon == std::string::npos ? "" : trim(item.substr(colon + 1));
          const double      gap       = std::strtod(gap_text.c_str(), &end_gap);
          const double      cost      = std::strtod(cost_text.c_str(), &end_cost);
          if (colon == std::string::npos || gap_text.empty() || cost_text.empty() || *end_gap != '\0' ||
              *end_cost != '\0' || !std::isfinite(gap) || !std::isfinite(cost))
            throw InputError(path, text, "expected a comma list of gap:cost pairs (um, relative), not '" +
                                           trim(item) + "'");
          if (!(gap > 0) || !(cost >= 0))
            throw InputError(path, text, "in '" + trim(item) + "' the gap must be > 0 um and the cost >= 0");
          if (!pairs.empty() && !(gap > pairs.back().first))
            throw InputError(path, text, "the gaps must increase from pair to pair");
          if (pairs.size() == 1000)
            throw InputError(path, text, "more than 1000 pairs");
          pairs.emplace_back(gap, cost);
        }
      return pairs;
    }
  } // namespace

  double
  FabricationSettings::cost_at(const double gap_um) const
  {
    if (gap_cost.empty())
      return 1;
    if (gap_um <= gap_cost.front().first)
      return gap_cost.front().second;
    for (std::size_t i = 1; i < gap_cost.size(); ++i)
      if (gap_um <= gap_cost[i].first)
        {
          const auto [g0, c0] = gap_cost[i - 1];
          const auto [g1, c1] = gap_cost[i];
          return c0 + (c1 - c0) * (gap_um - g0) / (g1 - g0);
        }
    return gap_cost.back().second;
  }

  void
  declare_case(dealii::ParameterHandler &prm)
  {
    geometry::GeometryParameters::declare_parameters(prm);
    geometry::MeshParameters::declare_parameters(prm);
    fem::Material::declare_parameters(prm, "Absorber", fem::Material());
    fem::Material::declare_parameters(prm, "Electron interlayer", interlayer_defaults(true));
    fem::Material::declare_parameters(prm, "Hole interlayer", interlayer_defaults(false));
    fem::ContactParameters::declare_parameters(prm, "Electron contact", contact_defaults(true));
    fem::ContactParameters::declare_parameters(prm, "Hole contact", contact_defaults(false));
    fem::SurfaceParameters::declare_parameters(prm, "Top surface", fem::SurfaceParameters());
    fem::SurfaceParameters::declare_parameters(prm, "Gap interface", fem::SurfaceParameters());
    fem::IlluminationParameters::declare_parameters(prm);
    fem::NumericsParameters::declare_parameters(prm);
    fem::ElectrodeParameters::declare_parameters(prm);

    using dealii::Patterns::Anything;
    using dealii::Patterns::Bool;
    using dealii::Patterns::Selection;

    prm.enter_subsection("Device");
    declare(prm, "Device", temperature);
    declare_text(prm, "Device", "Active area", "gap", Selection("gap|period"), "",
                 "Width counted as active for the per-active-area metrics: the gap "
                 "between the fingers, or the whole period (= footprint).");
    prm.leave_subsection();

    const std::string jv = "J-V scan";
    prm.enter_subsection(jv);
    declare(prm, jv, start_voltage);
    declare(prm, jv, stop_voltage);
    declare(prm, jv, voltage_step);
    declare_text(prm, jv, "Direction", "forward", Selection("forward|reverse"), "",
                 "forward: from Start to Stop voltage; reverse: from Stop to Start.");
    declare_text(prm, jv, "Dark scan", "true", Bool(), "",
                 "Also compute the dark J-V over the same biases.");
    declare(prm, jv, mpp_resolution);
    declare(prm, jv, suns_voc_intensities);
    prm.leave_subsection();

    prm.enter_subsection(hysteresis);
    declare(prm, hysteresis, scan_rate);
    declare_text(prm, hysteresis, "Directions", hysteresis_defaults.directions,
                 Selection("reverse then forward|forward then reverse|reverse|forward"), "",
                 "The scan's directions in order: reverse from Stop to Start voltage, forward from Start to Stop.");
    declare(prm, hysteresis, preconditioning_bias);
    declare(prm, hysteresis, preconditioning_time);
    declare(prm, hysteresis, step_tolerance);
    declare(prm, hysteresis, snapshots);
    prm.leave_subsection();

    prm.enter_subsection("Output");
    declare_text(prm, "Output", "Folder", output_defaults.folder, Anything(), "",
                 "Folder for the results (created if missing), relative to the working "
                 "directory; not empty.");
    declare_text(prm, "Output", "Write fields", "true", Bool(), "",
                 "Write the VTK fields at the field biases.");
    declare(prm, "Output", field_biases);
    declare(prm, "Output", dead_zone_threshold);
    declare(prm, "Output", power_balance_biases);
    declare_text(prm, "Output", "EQE without bias light", "false", Bool(), "",
                 "Besides the EQE under the case's light (differential, at short circuit), write the "
                 "linear-response EQE of the cell in the dark (eqe.csv column EQE_no_bias_light; one more "
                 "adjoint solve).");
    prm.leave_subsection();

    prm.enter_subsection(fabrication);
    declare(prm, fabrication, smallest_gap);
    declare(prm, fabrication, largest_gap);
    declare(prm, fabrication, gap_tolerance);
    declare(prm, fabrication, near_best_margin);
    declare(prm, fabrication, confidence);
    declare_text(prm, fabrication, "Cost per gap", "", Anything(), "",
                 "Relative cost of making a gap, as gap:cost pairs with the gap in um, increasing "
                 "(\"5:3, 20:1.5, 50:1\"); linear between the pairs, constant beyond the first and "
                 "the last. With a cost, a sweep recommends the cheapest gap within the near-best margin "
                 "(the wider one of equal cost); empty: no cost, the widest such gap.");
    prm.leave_subsection();
  }

  std::string
  default_case_text()
  {
    dealii::ParameterHandler prm;
    declare_case(prm);
    std::ostringstream out;
    out << "# backcomb case file: all entries with their defaults.\n"
        << "# Each entry's documentation ends with its unit and allowed range.\n";
    prm.print_parameters(out, dealii::ParameterHandler::PRM);
    return out.str();
  }

  std::vector<std::string>
  entry_paths()
  {
    std::vector<std::string> paths;
    for (const auto &[section, names] : declared_names().entries)
      for (const auto &name : names)
        paths.push_back(section + "/" + name);
    return paths;
  }

  std::pair<std::string, std::string>
  split_override(const std::string &text)
  {
    const auto eq = text.find('=');
    if (eq == std::string::npos || eq == 0 || text.find('/') == std::string::npos ||
        text.find('/') > eq)
      throw InputError("--set", text, "expected \"Section/Name=value\"");
    return {text.substr(0, eq), text.substr(eq + 1)};
  }

  namespace
  {
    // Why deal.II refused the override `path`: an unknown section or entry
    // (with the nearest names) or a value its pattern does not allow (with
    // the allowed values of a selection).
    std::string
    override_problem(const std::string &path, const dealii::ExceptionBase &e)
    {
      const std::string unknown = unknown_entry_reason(path);
      if (!unknown.empty())
        return unknown;
      std::ostringstream s;
      e.print_info(s);
      const std::string allowed = allowed_values(s.str());
      return "value not allowed here" + (allowed.empty() ? std::string(" (see 'backcomb template')") : allowed);
    }
  } // namespace

  std::string
  unknown_entry_reason(const std::string &path)
  {
    const Declared                &d     = declared_names();
    const std::vector<std::string> parts = split(path, '/');
    if (parts.empty() || parts.back().empty())
      return "no entry name after the last '/'";
    static const std::vector<std::string> none;
    std::string                           section;
    for (std::size_t i = 0; i + 1 < parts.size(); ++i)
      {
        const auto  it    = d.sections.find(section);
        const auto &known = it == d.sections.end() ? none : it->second;
        if (std::find(known.begin(), known.end(), parts[i]) == known.end())
          return "unknown section '" + parts[i] + "'" +
                 nearest_names(parts[i], known,
                               section.empty() ? "top-level sections" : "subsections of '" + section + "'");
        section += (section.empty() ? "" : "/") + parts[i];
      }
    const auto  it    = d.entries.find(section);
    const auto &known = it == d.entries.end() ? none : it->second;
    if (std::find(known.begin(), known.end(), parts.back()) == known.end())
      return "unknown entry '" + parts.back() + "'" +
             nearest_names(parts.back(), known, "entries of section '" + section + "'");
    return "";
  }

  namespace
  {
    // Sets (value given) or reads (value null) entry `path` of `prm`.
    std::string
    visit_entry(dealii::ParameterHandler &prm, const std::string &path, const std::string *value)
    {
      std::vector<std::string> parts;
      std::stringstream        p(path);
      for (std::string s; std::getline(p, s, '/');)
        parts.push_back(s);
      unsigned    depth = 0;
      std::string found;
      try
        {
          for (std::size_t i = 0; i + 1 < parts.size(); ++i, ++depth)
            prm.enter_subsection(parts[i]);
          if (value)
            prm.set(parts.back(), *value);
          else
            found = prm.get(parts.back());
        }
      catch (const dealii::ExceptionBase &e)
        {
          for (; depth > 0; --depth)
            prm.leave_subsection();
          throw InputError("--set " + path, value ? *value : "", override_problem(path, e));
        }
      for (; depth > 0; --depth)
        prm.leave_subsection();
      return found;
    }

    void
    set_entry(dealii::ParameterHandler &prm, const std::string &path, const std::string &value)
    {
      visit_entry(prm, path, &value);
    }
  } // namespace

  std::string
  override_as_text(const std::string &override)
  {
    const auto [path, value] = split_override(override);
    std::vector<std::string> parts;
    std::stringstream        p(path);
    for (std::string s; std::getline(p, s, '/');)
      parts.push_back(s);
    std::string text, indent;
    for (std::size_t d = 0; d + 1 < parts.size(); ++d, indent += "  ")
      text += indent + "subsection " + parts[d] + "\n";
    text += indent + "set " + parts.back() + " = " + value + "\n";
    for (std::size_t d = parts.size() - 1; d-- > 0;)
      text += std::string(2 * d, ' ') + "end\n";
    return text;
  }

  std::string
  entry_value(const Case &c, const std::string &path)
  {
    dealii::ParameterHandler prm;
    declare_case(prm);
    std::istringstream in(c.echo);
    prm.parse_input(in, c.file);
    for (const auto &o : c.overrides)
      {
        const auto [p, v] = split_override(o);
        set_entry(prm, p, v);
      }
    return visit_entry(prm, path, nullptr);
  }

  Case
  read_case(const std::string &file, const std::vector<std::string> &overrides)
  {
    std::error_code ec;
    if (!std::filesystem::is_regular_file(file, ec))
      throw InputError(file + ": not a readable case file (missing, or not a regular file)");
    std::ifstream in(file);
    if (!in)
      throw InputError(file + ": cannot open the case file for reading");
    return read_case(in, file, overrides);
  }

  Case
  read_case(std::istream &case_text, const std::string &file, const std::vector<std::string> &overrides)
  {
    Case c;
    c.file      = file;
    c.overrides = overrides;
    {
      std::ostringstream s;
      s << case_text.rdbuf();
      // A byte order mark, which some editors write at the start of a
      // UTF-8 file, is not part of the text.
      c.echo = without_byte_order_mark(s.str());
    }
    // Text at the edge: the case text and every override go into
    // summary.json and the sweep plan, so bytes that are not UTF-8 are
    // refused here, before any work, with the line and byte.
    require_utf8(c.echo, file, true);
    for (const auto &o : overrides)
      require_utf8(o, "--set '" + o + "'", false);
    refuse_invisible_characters(c.echo, file);
    refuse_include(c.echo, file);
    // A case file written for an older backcomb: say what each old name is
    // called now, before deal.II reports it as unknown.
    refuse_old_names(c.echo, file);
    dealii::ParameterHandler prm;
    declare_case(prm);
    try
      {
        std::istringstream in(c.echo);
        prm.parse_input(in, file);
      }
    catch (const dealii::ExceptionBase &e)
      {
        // deal.II's message names the file, the line and the entry; keep
        // its first lines, which carry that.
        std::ostringstream s;
        e.print_info(s);
        std::string msg = s.str();
        while (!msg.empty() && (msg.back() == '\n' || msg.back() == ' '))
          msg.pop_back();
        throw InputError(file + ": " + with_suggestion(msg, c.echo));
      }

    // Overrides: "Section/Sub/Name=value", each entry at most once.
    std::set<std::string> seen;
    std::string           override_of; // for error messages
    for (const auto &o : overrides)
      {
        const auto [path, value] = split_override(o);
        refuse_old_override(path, value);
        if (!seen.insert(path).second)
          throw InputError("--set " + path, value, "given more than once");
        set_entry(prm, path, value);
      }

    try
      {
        c.geometry.parse_parameters(prm);
        c.mesh.parse_parameters(prm);
        c.mesh.validate(c.geometry);
        c.absorber.parse_parameters(prm, "Absorber");
        c.electron_interlayer.parse_parameters(prm, "Electron interlayer");
        c.hole_interlayer.parse_parameters(prm, "Hole interlayer");
        c.electron_contact.parse_parameters(prm, "Electron contact");
        c.hole_contact.parse_parameters(prm, "Hole contact");
        c.top_surface.parse_parameters(prm, "Top surface");
        c.gap_interface.parse_parameters(prm, "Gap interface");
        c.illumination.parse_parameters(prm, std::filesystem::path(file).parent_path());
        c.numerics.parse_parameters(prm);
        c.electrodes.parse_parameters(prm);

        prm.enter_subsection("Device");
        c.device.temperature = get(prm, "Device", temperature);
        c.device.active_area = prm.get("Active area") == "period" ? DeviceSettings::ActiveArea::period
                                                                   : DeviceSettings::ActiveArea::gap;
        prm.leave_subsection();

        const std::string jv = "J-V scan";
        prm.enter_subsection(jv);
        c.jv.start     = get(prm, jv, start_voltage);
        c.jv.stop      = get(prm, jv, stop_voltage);
        c.jv.step      = get(prm, jv, voltage_step);
        c.jv.reverse   = prm.get("Direction") == "reverse";
        c.jv.dark      = prm.get_bool("Dark scan");
        c.jv.refine_to = get(prm, jv, mpp_resolution);
        if (!(c.jv.stop > c.jv.start))
          throw InputError(jv + "/Stop voltage", prm.get("Stop voltage"),
                           "must be larger than Start voltage = " + prm.get("Start voltage"));
        c.jv.suns_voc = get(prm, jv, suns_voc_intensities);
        if ((c.jv.stop - c.jv.start) / c.jv.step > 20000)
          throw InputError(jv + "/Voltage step", prm.get("Voltage step"),
                           "gives more than 20000 biases");
        prm.leave_subsection();

        prm.enter_subsection(hysteresis);
        c.hysteresis.rate              = get(prm, hysteresis, scan_rate);
        c.hysteresis.directions        = prm.get("Directions");
        c.hysteresis.precondition_bias = get(prm, hysteresis, preconditioning_bias);
        c.hysteresis.precondition_time = get(prm, hysteresis, preconditioning_time);
        c.hysteresis.tolerance         = get(prm, hysteresis, step_tolerance);
        c.hysteresis.snapshots         = static_cast<unsigned>(get(prm, hysteresis, snapshots));
        if (c.hysteresis.rate > 0 && !(c.absorber.ion_density > 0))
          throw InputError(hysteresis + "/Scan rate", prm.get("Scan rate"),
                           "needs mobile ions: Absorber/" + fem::mobile_ions_subsection + "/Density is 0");
        prm.leave_subsection();

        prm.enter_subsection("Output");
        c.output.folder = prm.get("Folder");
        if (c.output.folder.empty())
          throw InputError("Output/Folder", "", "must not be empty");
        c.output.fields              = prm.get_bool("Write fields");
        c.output.dead_zone_threshold = get(prm, "Output", dead_zone_threshold);
        c.output.field_biases        = get(prm, "Output", field_biases);
        c.output.loss_biases         = get(prm, "Output", power_balance_biases);
        c.output.eqe_without_bias_light = prm.get_bool("EQE without bias light");
        const auto check_within_scan = [&](const NumberListEntry &e, const std::vector<double> &biases) {
          for (const double v : biases)
            if (v < c.jv.start - 1e-12 || v > c.jv.stop + 1e-12)
              throw InputError("Output/" + e.name, prm.get(e.name),
                               "every bias must lie within the J-V scan [Start, Stop voltage]");
        };
        check_within_scan(field_biases, c.output.field_biases);
        check_within_scan(power_balance_biases, c.output.loss_biases);
        prm.leave_subsection();

        prm.enter_subsection(fabrication);
        c.fabrication.smallest_gap_um   = get(prm, fabrication, smallest_gap);
        c.fabrication.largest_gap_um    = get(prm, fabrication, largest_gap);
        c.fabrication.gap_tolerance_um  = get(prm, fabrication, gap_tolerance);
        c.fabrication.near_best_percent = get(prm, fabrication, near_best_margin);
        c.fabrication.confidence_percent = get(prm, fabrication, confidence);
        c.fabrication.gap_cost          = parse_gap_cost(prm.get("Cost per gap"));
        if (c.fabrication.largest_gap_um < c.fabrication.smallest_gap_um)
          throw InputError(fabrication + "/Largest gap", prm.get("Largest gap"),
                           "must not be below Smallest gap = " + prm.get("Smallest gap") + " um");
        prm.leave_subsection();

        // Contradictions between sections.
        check_consistency(c, prm);
        prepare_absorber_emission(c);
      }
    catch (const InputError &e)
      {
        // Locate the entry in the file or among the overrides.
        std::string where = file;
        bool        from_override = false;
        for (const auto &o : overrides)
          if (o.rfind(e.entry() + "=", 0) == 0)
            from_override = true;
        if (from_override)
          where = "--set " + e.entry();
        else if (const unsigned line = find_line(c.echo, e.entry()))
          where += ":" + std::to_string(line);
        throw InputError(where + ": " + e.what());
      }
    return c;
  }
} // namespace backcomb::simulator
