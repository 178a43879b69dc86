// Case-file entries declared once: the range that `backcomb template` states
// for an entry is the range that read_case() enforces, the declared units,
// and the table of renamed entries (old case files refused with the new
// name, `upgrade` converting them to the same case).
#include "base/entries.h"
#include "simulator/case_file.h"
#include "simulator/legacy_entries.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <optional>
#include <sstream>

using namespace backcomb;
using namespace backcomb::simulator;

namespace
{
  // The documentation of every entry in the template text, by full path.
  // deal.II prints an entry's documentation as '#' lines broken at blanks
  // just above its 'set' line; joined with blanks they give the text back.
  std::map<std::string, std::string>
  template_documentation(const std::string &text)
  {
    std::map<std::string, std::string> docs;
    std::vector<std::string>           stack;
    std::string                        doc;
    std::istringstream                 in(text);
    for (std::string line; std::getline(in, line);)
      {
        const auto first = line.find_first_not_of(' ');
        if (first == std::string::npos)
          {
            doc.clear();
            continue;
          }
        line.erase(0, first);
        if (line[0] == '#')
          {
            const std::string part = line.size() > 2 ? line.substr(2) : "";
            doc += (doc.empty() ? "" : " ") + part;
          }
        else if (line.rfind("subsection ", 0) == 0)
          {
            stack.push_back(line.substr(11));
            doc.clear();
          }
        else if (line == "end")
          {
            stack.pop_back();
            doc.clear();
          }
        else if (line.rfind("set ", 0) == 0)
          {
            std::string name = line.substr(4, line.find('=') - 4);
            name.erase(name.find_last_not_of(' ') + 1);
            std::string path;
            for (const auto &s : stack)
              path += s + "/";
            docs[path + name] = doc;
            doc.clear();
          }
      }
    return docs;
  }

  // A range as the template states it ("0 < value <= 1000", "value >= 0",
  // "2 <= value <= 5, a whole number"), read back into numbers.
  struct StatedRange
  {
    std::optional<double> lo, hi;
    bool                  lo_open = false, hi_open = false, whole = false;
  };

  StatedRange
  parse_stated_range(std::string text)
  {
    StatedRange r;
    const std::string whole = ", a whole number";
    if (text.size() > whole.size() && text.compare(text.size() - whole.size(), whole.size(), whole) == 0)
      {
        r.whole = true;
        text.erase(text.size() - whole.size());
      }
    std::istringstream in(text);
    std::string        a, op1, b, op2, c;
    in >> a >> op1 >> b;
    if (a == "value")
      {
        // "value > lo" or "value >= lo"
        r.lo      = std::strtod(b.c_str(), nullptr);
        r.lo_open = op1 == ">";
        return r;
      }
    in >> op2 >> c;
    EXPECT_EQ(b, "value") << text;
    r.lo      = std::strtod(a.c_str(), nullptr);
    r.lo_open = op1 == "<";
    r.hi      = std::strtod(c.c_str(), nullptr);
    r.hi_open = op2 == "<";
    return r;
  }

  std::string
  number(const double v)
  {
    std::ostringstream s;
    s.precision(12);
    s << v;
    return s.str();
  }

  // read_case() of an empty case file with the given overrides: "" if it
  // reads, else the error message.
  std::string
  read_error(const std::vector<std::string> &overrides, const std::string &text = "")
  {
    try
      {
        std::istringstream in(text);
        read_case(in, "case.prm", overrides);
        return "";
      }
    catch (const InputError &e)
      {
        return e.what();
      }
  }

  // The stated range of `path` in the template text.
  StatedRange
  stated_range(const std::string &path)
  {
    const auto docs = template_documentation(default_case_text());
    const auto it   = docs.find(path);
    EXPECT_NE(it, docs.end()) << path << " is not in the template";
    if (it == docs.end())
      return {};
    const std::string &doc = it->second;
    // Lists state the range of each item.
    std::string key = "Allowed for each: ";
    auto        at  = doc.find(key);
    if (at == std::string::npos)
      {
        key = "Allowed: ";
        at  = doc.find(key);
      }
    EXPECT_NE(at, std::string::npos) << path << ": " << doc;
    if (at == std::string::npos)
      return {};
    std::string range = doc.substr(at + key.size());
    EXPECT_EQ(range.back(), '.') << doc;
    range.pop_back();
    return parse_stated_range(range);
  }

  // A sample entry: values just inside each stated bound must read, values
  // just outside must fail with a message naming the entry. `margin` is how
  // far inside or outside an open/closed bound the values lie (relative for
  // a non-zero bound); `inside_lo`, where given, replaces the computed value
  // just above the lower bound (when a tiny value would break another check
  // such as the mesh size, it is still a value the stated range admits).
  struct Sample
  {
    std::string           path;
    double                margin = 1e-6;
    std::optional<double> inside_lo{};
  };

  void
  check_sample(const Sample &s)
  {
    SCOPED_TRACE(s.path);
    const StatedRange r    = stated_range(s.path);
    const auto        near = [&](const double bound, const double sign) {
      return bound + sign * s.margin * (bound == 0 ? 1.0 : std::abs(bound));
    };
    std::vector<double> inside, outside;
    ASSERT_TRUE(r.lo.has_value());
    if (r.whole)
      {
        inside.push_back(*r.lo);
        outside.push_back(*r.lo - 1);
        outside.push_back(*r.lo + 0.5);
      }
    else
      {
        inside.push_back(s.inside_lo ? *s.inside_lo : r.lo_open ? near(*r.lo, +1) : *r.lo);
        outside.push_back(r.lo_open ? *r.lo : near(*r.lo, -1));
      }
    if (r.hi)
      {
        inside.push_back(r.hi_open ? near(*r.hi, -1) : *r.hi);
        outside.push_back(r.hi_open ? *r.hi : r.whole ? *r.hi + 1 : near(*r.hi, +1));
      }
    for (const double v : inside)
      EXPECT_EQ(read_error({s.path + "=" + number(v)}), "") << "value " << number(v) << " inside the stated range";
    for (const double v : outside)
      {
        const std::string msg = read_error({s.path + "=" + number(v)});
        EXPECT_NE(msg.find(s.path + " = " + number(v)), std::string::npos)
          << "value " << number(v) << " outside the stated range: " << msg;
      }
  }
} // namespace

// For a sample of the entries of every converted section, the range in the
// template text is exactly the range read_case() enforces.
TEST(Entries, TemplateRangeIsTheCheckedRange)
{
  const std::vector<Sample> samples = {
    {"Geometry/Hole interlayer thickness"},
    {"Geometry/Strip length"},
    {"Geometry/Junction position"},
    {"Mesh/Smallest cell"},
    // Just above 1 the mesh would exceed the cell limit (checked with its
    // own message); 1.05 is inside the stated range and meshes.
    {"Mesh/Growth ratio", 1e-6, 1.05},
    {"Illumination/Intensity"},
    {"Illumination/Finger transmittance"},
    {"Illumination/Back reflectance"},
    {"Illumination/Uniform generation rate"},
    {"Illumination/Electron interlayer absorption coefficient"},
    {"Numerics/Newton tolerance"},
    {"Numerics/Newton iterations"},
    {"Numerics/Update limit"},
    {"Numerics/Quadrature points"},
    {"Electrodes/Finger length"},
    {"Electrodes/Electron finger sheet resistance"},
    {"Electrodes/Hole contact resistivity"},
    {"Electrodes/Finger elements"},
    {"Device/Temperature"},
    {"J-V scan/Voltage step"},
    {"J-V scan/Maximum power point resolution"},
    {"J-V scan/Suns-Voc intensities"},
    {"Output/Dead zone threshold"},
    {"Fabrication/Smallest gap"},
    {"Fabrication/Largest gap"},
    {"Fabrication/Gap tolerance"},
    {"Fabrication/Near-best margin"},
    {"Fabrication/Confidence"},
  };
  for (const auto &s : samples)
    check_sample(s);
}

// Entries whose bounds meet another check: the stated bound is still the
// checked one when the other entry makes room.
TEST(Entries, BiasRangeOfTheScan)
{
  const StatedRange r = stated_range("J-V scan/Start voltage");
  ASSERT_TRUE(r.lo && r.hi);
  EXPECT_EQ(*r.lo, -5);
  EXPECT_EQ(*r.hi, 5);
  EXPECT_EQ(stated_range("J-V scan/Stop voltage").hi.value_or(0), 5);
  EXPECT_EQ(read_error({"J-V scan/Start voltage=-5", "J-V scan/Stop voltage=5", "J-V scan/Voltage step=0.01"}), "");
  EXPECT_NE(read_error({"J-V scan/Start voltage=-5.001"}).find("J-V scan/Start voltage = -5.001"), std::string::npos);
  EXPECT_NE(read_error({"J-V scan/Stop voltage=5.001"}).find("J-V scan/Stop voltage = 5.001"), std::string::npos);
  // Field biases: each item within the stated range and within the scan.
  EXPECT_EQ(read_error({"Output/Field biases=0, 0.5, 1.3"}), "");
  EXPECT_NE(read_error({"Output/Field biases=0, 5.5"}).find("Output/Field biases = 0, 5.5"), std::string::npos);
  EXPECT_NE(read_error({"Output/Power balance biases=0.2, x"}).find("Output/Power balance biases = 0.2, x"),
            std::string::npos);
}

// Every number entry of the converted sections states a unit (or that it
// is dimensionless) and its allowed range in the template.
TEST(Entries, TemplateStatesUnitAndRange)
{
  const auto docs = template_documentation(default_case_text());
  unsigned   checked = 0;
  for (const auto &[path, doc] : docs)
    {
      const std::string section = path.substr(0, path.find('/'));
      if (section != "Geometry" && section != "Mesh" && section != "Illumination" && section != "Numerics" &&
          section != "Electrodes" && section != "Device" && section != "J-V scan" && section != "Output" &&
          section != "Fabrication")
        continue;
      if (doc.find("Allowed") == std::string::npos)
        continue; // a selection, flag or file name
      ++checked;
      EXPECT_TRUE(doc.find(" Unit: " + entry_unit(path) + ".") != std::string::npos ||
                  (entry_unit(path).empty() && doc.find(" Dimensionless.") != std::string::npos))
        << path << ": " << doc;
    }
  // 8 + 4 + 7 + 5 + 6 + 1 + 5 + 3 + 5 number entries in these sections.
  EXPECT_EQ(checked, 44u);
}

TEST(Entries, DeclaredUnits)
{
  dealii::ParameterHandler prm;
  declare_case(prm);
  EXPECT_EQ(entry_unit("Electrodes/Finger length"), "mm");
  EXPECT_EQ(entry_unit("Electrodes/Hole contact resistivity"), "ohm cm^2");
  EXPECT_EQ(entry_unit("Electrodes/Electron finger sheet resistance"), "ohm/sq");
  EXPECT_EQ(entry_unit("Geometry/Gap"), "um");
  EXPECT_EQ(entry_unit("Geometry/Electron interlayer thickness"), "nm");
  EXPECT_EQ(entry_unit("Mesh/Largest lateral cell"), "um");
  EXPECT_EQ(entry_unit("Mesh/Growth ratio"), "");
  EXPECT_EQ(entry_unit("Illumination/Intensity"), "suns");
  EXPECT_EQ(entry_unit("Illumination/Uniform generation rate"), "cm^-3 s^-1");
  EXPECT_EQ(entry_unit("Numerics/Update limit"), "kT/q");
  EXPECT_EQ(entry_unit("Device/Temperature"), "K");
  EXPECT_EQ(entry_unit("J-V scan/Voltage step"), "V");
  EXPECT_EQ(entry_unit("Output/Field biases"), "V");
  EXPECT_EQ(entry_unit("Fabrication/Gap tolerance"), "um");
  EXPECT_EQ(entry_unit("Fabrication/Near-best margin"), "%");
  EXPECT_EQ(entry_unit("No such/Entry"), "");
}

// ------------------------------------------------------------ old names

// Every row of the table leads from a name that no longer exists to one
// that does; a section row renames only the last component.
TEST(LegacyEntries, TableLeadsToDeclaredEntries)
{
  // The declared entries are those the template lists.
  const auto docs     = template_documentation(default_case_text());
  const auto declared = [&](const std::string &path, bool) { return docs.count(path) == 1; };
  ASSERT_TRUE(declared("J-V scan/Stop voltage", true));
  ASSERT_FALSE(declared("J-V scan/Dark sweep", true));
  ASSERT_FALSE(renamed_entries().empty());
  for (const auto &row : renamed_entries())
    {
      SCOPED_TRACE(row.old_path + " -> " + row.new_path);
      if (row.kind == Rename::Kind::section)
        {
          EXPECT_EQ(row.old_path.substr(0, row.old_path.rfind('/') + 1),
                    row.new_path.substr(0, row.new_path.rfind('/') + 1));
          EXPECT_NE(current_section_path(row.old_path), row.old_path);
        }
      else
        {
          EXPECT_TRUE(declared(current_entry_path(row.old_path), true));
          EXPECT_FALSE(declared(row.old_path, true));
        }
    }
  EXPECT_EQ(current_entry_path("J-V sweep/Dark sweep"), "J-V scan/Dark scan");
  EXPECT_EQ(current_entry_path("J-V sweep/Voltage step"), "J-V scan/Voltage step");
  EXPECT_EQ(current_entry_path("Output/Loss biases"), "Output/Power balance biases");
  EXPECT_EQ(current_entry_path("Geometry/Gap"), "Geometry/Gap");
}

namespace
{
  // A case file as written for the previous names: aligned, with comments
  // and a blank section.
  const std::string old_case = R"(# an old case file
subsection Geometry
  set Gap = 12   # um
end

subsection J-V sweep   # the bias scan
  set Start voltage                  = -0.2
  set Stop voltage                   = 1.1
  set Dark sweep                     = false   # light only
  set Voltage step                   = 0.05
  set Suns-Voc intensities           = 1, 0.1
end

subsection Output
  set Loss biases = 0.3, 0.6
  set Field biases = 0
end
)";

  // The same case in the current names, written by hand: the reference.
  const std::string new_case = R"(subsection Geometry
  set Gap = 12
end
subsection J-V scan
  set Start voltage = -0.2
  set Stop voltage = 1.1
  set Dark scan = false
  set Voltage step = 0.05
  set Suns-Voc intensities = 1, 0.1
end
subsection Output
  set Power balance biases = 0.3, 0.6
  set Field biases = 0
end
)";
} // namespace

TEST(LegacyEntries, OldCaseFileRefusedWithTheNewName)
{
  const std::string msg = read_error({}, old_case);
  // The first old name is the section's first entry, on line 7.
  EXPECT_NE(msg.find("case.prm:7: 'J-V sweep/Start voltage' is an old entry name; the entry is now "
                     "'J-V scan/Start voltage'"),
            std::string::npos)
    << msg;
  EXPECT_NE(msg.find("backcomb upgrade case.prm"), std::string::npos) << msg;

  // An old entry name in a section that kept its name.
  const std::string loss = read_error({}, "subsection Output\n\n  set Loss biases = 0\nend\n");
  EXPECT_NE(loss.find("case.prm:3: 'Output/Loss biases' is an old entry name; the entry is now "
                      "'Output/Power balance biases'"),
            std::string::npos)
    << loss;

  // An old section without entries is named at its subsection line.
  const std::string empty = read_error({}, "# nothing set\nsubsection J-V sweep\nend\n");
  EXPECT_NE(empty.find("case.prm:2: 'J-V sweep' is an old section name; the section is now 'J-V scan'"),
            std::string::npos)
    << empty;
}

TEST(LegacyEntries, OldOverrideRefusedWithTheNewName)
{
  const std::string msg = read_error({"J-V sweep/Dark sweep=false"});
  EXPECT_NE(msg.find("--set J-V sweep/Dark sweep: an old entry name; the entry is now 'J-V scan/Dark scan': "
                     "write --set \"J-V scan/Dark scan=false\""),
            std::string::npos)
    << msg;
  EXPECT_NE(read_error({"J-V sweep/Stop voltage=1"}).find("'J-V scan/Stop voltage'"), std::string::npos);
}

TEST(LegacyEntries, UpgradeGivesTheSameCase)
{
  const std::string upgraded = upgrade_case_text(old_case);
  // Only names change: every line of the old file is still there with its
  // comment, and the '=' of the aligned block stays in its column.
  EXPECT_NE(upgraded.find("subsection J-V scan   # the bias scan\n"), std::string::npos) << upgraded;
  const auto line_with = [](const std::string &text, const std::string &part) {
    const auto at    = text.find(part);
    const auto begin = text.rfind('\n', at) + 1;
    return text.substr(begin, text.find('\n', at) - begin);
  };
  const std::string dark = line_with(upgraded, "Dark scan");
  EXPECT_EQ(dark.find('='), line_with(old_case, "Dark sweep").find('='));
  EXPECT_EQ(dark.substr(dark.find('=')), "= false   # light only");
  EXPECT_NE(upgraded.find("  set Power balance biases = 0.3, 0.6\n"), std::string::npos) << upgraded;
  EXPECT_NE(upgraded.find("  set Gap = 12   # um\n"), std::string::npos) << upgraded;
  EXPECT_EQ(std::count(upgraded.begin(), upgraded.end(), '\n'), std::count(old_case.begin(), old_case.end(), '\n'));
  EXPECT_EQ(upgraded.find("sweep"), std::string::npos) << upgraded;
  EXPECT_EQ(upgrade_case_text(upgraded), upgraded); // nothing left to convert

  std::istringstream a(upgraded), b(new_case);
  const Case         from_old = read_case(a, "case.prm", {});
  const Case         from_new = read_case(b, "case.prm", {});
  EXPECT_EQ(from_old.geometry.gap_um, 12);
  EXPECT_EQ(from_old.geometry.gap_um, from_new.geometry.gap_um);
  EXPECT_EQ(from_old.jv.start, -0.2);
  EXPECT_EQ(from_old.jv.start, from_new.jv.start);
  EXPECT_EQ(from_old.jv.stop, from_new.jv.stop);
  EXPECT_EQ(from_old.jv.step, from_new.jv.step);
  EXPECT_FALSE(from_old.jv.dark);
  EXPECT_EQ(from_old.jv.dark, from_new.jv.dark);
  EXPECT_EQ(from_old.jv.suns_voc, (std::vector<double>{1, 0.1}));
  EXPECT_EQ(from_old.jv.suns_voc, from_new.jv.suns_voc);
  EXPECT_EQ(from_old.output.loss_biases, (std::vector<double>{0.3, 0.6}));
  EXPECT_EQ(from_old.output.loss_biases, from_new.output.loss_biases);
  EXPECT_EQ(from_old.output.field_biases, from_new.output.field_biases);
}

// The kinds of rename the shipped table does not use yet: an entry moved
// into another (nested) section, and a renamed nested section.
TEST(LegacyEntries, UpgradeMovesAnEntryToAnotherSection)
{
  const std::vector<Rename> table = {
    {Rename::Kind::entry, "Device/Temperature", "Conditions/Cell/Temperature"},
    {Rename::Kind::section, "Absorber/Bands", "Absorber/Band edges"},
  };
  const std::string text     = "subsection Device\n"
                               "  set Temperature = 310 # K\n"
                               "  set Active area = period\n"
                               "end\n"
                               "subsection Absorber\n"
                               "  subsection Bands\n"
                               "    set Band gap = 1.5\n"
                               "  end\n"
                               "end\n";
  const std::string expected = "subsection Device\n"
                               "  # 'Device/Temperature' is now 'Conditions/Cell/Temperature', set at the end of "
                               "this file\n"
                               "  set Active area = period\n"
                               "end\n"
                               "subsection Absorber\n"
                               "  subsection Band edges\n"
                               "    set Band gap = 1.5\n"
                               "  end\n"
                               "end\n"
                               "\n"
                               "# 'Device/Temperature' (line 2), now 'Conditions/Cell/Temperature'\n"
                               "subsection Conditions\n"
                               "  subsection Cell\n"
                               "    set Temperature = 310 # K\n"
                               "  end\n"
                               "end\n";
  EXPECT_EQ(upgrade_case_text(text, table), expected);
}

// The shipped case files read without error, and the candidate gaps in the
// header of each ("# Candidate gaps (um): ..."), which .ci/demo sweeps, lie
// inside its Fabrication limits. (A consistency check of the shipped
// files: no outside reference applies.)
TEST(ShippedCases, ReadAndListGapsTheProcessCanMake)
{
  for (const char *name : {"demo.prm", "short-film.prm"})
    {
      const std::string file = std::string(BACKCOMB_SOURCE_DIR) + "/cases/" + name;
      SCOPED_TRACE(file);
      const Case c = read_case(file, {});
      std::ifstream in(file);
      std::vector<double> gaps;
      for (std::string line; std::getline(in, line);)
        if (line.rfind("# Candidate gaps (um):", 0) == 0)
          {
            std::istringstream values(line.substr(line.find(':') + 1));
            for (double g; values >> g;)
              gaps.push_back(g);
          }
      ASSERT_GE(gaps.size(), 3u);
      for (const double g : gaps)
        {
          EXPECT_GE(g, c.fabrication.smallest_gap_um);
          EXPECT_LE(g, c.fabrication.largest_gap_um);
        }
      EXPECT_TRUE(std::is_sorted(gaps.begin(), gaps.end()));
    }
  // The demo states the patterning limit its header describes.
  const Case demo = read_case(std::string(BACKCOMB_SOURCE_DIR) + "/cases/demo.prm", {});
  EXPECT_EQ(demo.fabrication.smallest_gap_um, 8.0);
  EXPECT_EQ(demo.fabrication.gap_tolerance_um, 2.0);
}
