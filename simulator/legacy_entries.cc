#include "simulator/legacy_entries.h"

#include "base/errors.h"

#include <cctype>
#include <sstream>
#include <utility>

namespace backcomb::simulator
{
  // ----------------------------------------------------------- the table
  //
  // One line per rename. Each row is written in the names that hold after
  // the rows above it, so that a name renamed twice is two rows and an old
  // case file of any age converts by applying the rows in order.
  const std::vector<Rename> &
  renamed_entries()
  {
    using K = Rename::Kind;
    static const std::vector<Rename> table = [] {
      std::vector<Rename> t = {
        // "sweep" means the parameter sweep over cases; one J-V curve is a scan.
        {K::section, "J-V sweep", "J-V scan"},
        {K::entry, "J-V scan/Dark sweep", "J-V scan/Dark scan"},
        // The entry lists biases at which the power balance is reported.
        {K::entry, "Output/Loss biases", "Output/Power balance biases"},
      };
      // A material's entries grouped by concern, the Auger coefficients
      // named by their process; the same rows for every material section.
      const std::pair<const char *, const char *> material_moves[] = {
        {"Band gap", "Bands and permittivity/Band gap"},
        {"Electron affinity", "Bands and permittivity/Electron affinity"},
        {"Conduction band density of states", "Bands and permittivity/Conduction band density of states"},
        {"Valence band density of states", "Bands and permittivity/Valence band density of states"},
        {"Relative permittivity", "Bands and permittivity/Relative permittivity"},
        {"Electron mobility", "Transport/Electron mobility"},
        {"Hole mobility", "Transport/Hole mobility"},
        {"Donor density", "Doping/Donor density"},
        {"Acceptor density", "Doping/Acceptor density"},
        {"Electron lifetime", "Recombination/SRH/Electron lifetime"},
        {"Hole lifetime", "Recombination/SRH/Hole lifetime"},
        {"Trap level", "Recombination/SRH/Trap level"},
        {"Radiative coefficient", "Recombination/Radiative/Coefficient"},
        {"Photon recycling probability", "Recombination/Radiative/Photon recycling probability"},
        {"Auger electron coefficient", "Recombination/Auger/Electron-electron-hole coefficient"},
        {"Auger hole coefficient", "Recombination/Auger/Electron-hole-hole coefficient"}};
      for (const std::string m : {"Absorber", "Electron interlayer", "Hole interlayer"})
        for (const auto &[old_name, new_name] : material_moves)
          t.push_back({K::entry, m + "/" + old_name, m + "/" + new_name});
      // A contact's velocities say what they do: the speed at which each
      // carrier passes into the metal.
      for (const std::string c : {"Electron contact", "Hole contact"})
        {
          t.push_back({K::entry, c + "/Electron recombination velocity", c + "/Electron transfer velocity"});
          t.push_back({K::entry, c + "/Hole recombination velocity", c + "/Hole transfer velocity"});
        }
      return t;
    }();
    return table;
  }

  namespace
  {
    std::string
    parent_of(const std::string &path)
    {
      const auto slash = path.rfind('/');
      return slash == std::string::npos ? std::string() : path.substr(0, slash);
    }

    std::string
    last_of(const std::string &path)
    {
      return path.substr(path.rfind('/') + 1);
    }

    std::string
    join(const std::vector<std::string> &parts)
    {
      std::string out;
      for (const auto &p : parts)
        out += (out.empty() ? "" : "/") + p;
      return out;
    }

    // A section path with the section rows of `table` applied in order.
    std::string
    section_path_in(const std::vector<Rename> &table, std::string section)
    {
      for (const auto &row : table)
        if (row.kind == Rename::Kind::section &&
            (section == row.old_path || section.rfind(row.old_path + "/", 0) == 0))
          section = row.new_path + section.substr(row.old_path.size());
      return section;
    }

    // An entry path with every row of `table` applied in order.
    std::string
    entry_path_in(const std::vector<Rename> &table, std::string path)
    {
      for (const auto &row : table)
        if (row.kind == Rename::Kind::entry && path == row.old_path)
          path = row.new_path;
        else if (row.kind == Rename::Kind::section && path.rfind(row.old_path + "/", 0) == 0)
          path = row.new_path + path.substr(row.old_path.size());
      return path;
    }
  } // namespace

  std::string
  current_section_path(const std::string &section)
  {
    return section_path_in(renamed_entries(), section);
  }

  std::string
  current_entry_path(const std::string &path)
  {
    return entry_path_in(renamed_entries(), path);
  }

  // ----------------------------------------------------- reading the text
  namespace
  {
    // One logical line of a case file: a physical line and the lines that
    // continue it (after a trailing backslash). Only the first physical line
    // is interpreted: it carries the keyword and the name.
    struct Line
    {
      enum class Kind
      {
        other,
        subsection,
        end,
        set
      } kind = Kind::other;
      unsigned                 number = 0; // of the first physical line, from 1
      std::vector<std::string> physical;
      // The name as written ([name_begin, name_end) in physical[0]) and with
      // blanks collapsed, as deal.II compares it.
      std::size_t name_begin = 0, name_end = 0;
      std::string name;
      // Section path (old names as written) that the line is in; for a
      // subsection line, the path it opens.
      std::vector<std::string> section;
    };

    std::string
    collapsed(const std::string &text)
    {
      std::string out;
      for (const char c : text)
        if (c == ' ' || c == '\t')
          {
            if (!out.empty() && out.back() != ' ')
              out += ' ';
          }
        else
          out += c;
      while (!out.empty() && out.back() == ' ')
        out.pop_back();
      return out;
    }

    // Span of `s` within [begin, end) without surrounding blanks.
    void
    trim_span(const std::string &s, std::size_t &begin, std::size_t &end)
    {
      while (begin < end && (s[begin] == ' ' || s[begin] == '\t'))
        ++begin;
      while (end > begin && (s[end - 1] == ' ' || s[end - 1] == '\t' || s[end - 1] == '\r'))
        --end;
    }

    std::vector<Line>
    scan(const std::string &text)
    {
      std::vector<Line>        lines;
      std::vector<std::string> stack;
      std::istringstream       in(text);
      bool                     continues = false;
      unsigned                 number    = 0;
      for (std::string physical; std::getline(in, physical);)
        {
          ++number;
          const auto last      = physical.find_last_not_of(" \t\r");
          const bool continued = last != std::string::npos && physical[last] == '\\';
          if (continues)
            {
              lines.back().physical.push_back(physical);
              continues = continued;
              continue;
            }
          continues = continued;
          Line l;
          l.number = number;
          l.physical.push_back(physical);
          l.section = stack;

          // The code part: up to a comment, and without the continuation mark.
          std::size_t end = std::min(physical.find('#'), physical.size());
          if (continued && last < end)
            end = last;
          std::size_t begin = 0;
          trim_span(physical, begin, end);
          std::size_t word_end = begin;
          while (word_end < end && physical[word_end] != ' ' && physical[word_end] != '\t')
            ++word_end;
          std::string keyword = physical.substr(begin, word_end - begin);
          for (char &c : keyword)
            c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));

          if (keyword == "subsection" && word_end < end)
            {
              l.kind       = Line::Kind::subsection;
              l.name_begin = word_end;
              l.name_end   = end;
              trim_span(physical, l.name_begin, l.name_end);
              l.name = collapsed(physical.substr(l.name_begin, l.name_end - l.name_begin));
              stack.push_back(l.name);
              l.section = stack;
            }
          else if (keyword == "end" && word_end == end)
            {
              l.kind = Line::Kind::end;
              if (!stack.empty())
                stack.pop_back();
            }
          else if (keyword == "set" && physical.find('=', word_end) < end)
            {
              l.kind       = Line::Kind::set;
              l.name_begin = word_end;
              l.name_end   = physical.find('=', word_end);
              trim_span(physical, l.name_begin, l.name_end);
              l.name = collapsed(physical.substr(l.name_begin, l.name_end - l.name_begin));
            }
          lines.push_back(std::move(l));
        }
      return lines;
    }

    std::string
    old_path_of(const Line &l)
    {
      return l.kind == Line::Kind::set ? join(l.section) + "/" + l.name : join(l.section);
    }

    std::string
    new_path_of(const std::vector<Rename> &table, const Line &l)
    {
      return l.kind == Line::Kind::set ? entry_path_in(table, old_path_of(l))
                                       : section_path_in(table, old_path_of(l));
    }
  } // namespace

  void
  refuse_old_names(const std::string &text, const std::string &file)
  {
    const auto how = "; convert the file with 'backcomb upgrade " + file +
                     " > NEW.prm' (it prints the case file with the current names)";
    // An entry line names the old entry and its new path; a section with
    // old name but no entries in it is reported at its subsection line.
    const auto &table       = renamed_entries();
    const auto  lines       = scan(text);
    const Line *old_section = nullptr;
    for (const Line &l : lines)
      if (l.kind == Line::Kind::set && new_path_of(table, l) != old_path_of(l))
        throw InputError(file + ":" + std::to_string(l.number) + ": '" + old_path_of(l) +
                         "' is an old entry name; the entry is now '" + new_path_of(table, l) + "'" + how);
      else if (l.kind == Line::Kind::subsection && !old_section && new_path_of(table, l) != old_path_of(l))
        old_section = &l;
    if (old_section)
      throw InputError(file + ":" + std::to_string(old_section->number) + ": '" +
                       old_path_of(*old_section) + "' is an old section name; the section is now '" +
                       new_path_of(table, *old_section) + "'" + how);
  }

  void
  refuse_old_override(const std::string &path, const std::string &value)
  {
    const std::string now = current_entry_path(collapsed(path));
    if (now != collapsed(path))
      throw InputError("--set " + path + ": an old entry name; the entry is now '" + now +
                       "': write --set \"" + now + "=" + value + "\"");
  }

  std::string
  upgrade_case_text(const std::string &text)
  {
    return upgrade_case_text(text, renamed_entries());
  }

  std::string
  upgrade_case_text(const std::string &text, const std::vector<Rename> &table)
  {
    std::ostringstream out, moved;
    for (const Line &l : scan(text))
      {
        std::vector<std::string> physical = l.physical;
        std::string             &first    = physical.front();
        const std::string        old_path = old_path_of(l);
        const std::string        new_path = new_path_of(table, l);
        if (l.kind == Line::Kind::subsection && new_path != old_path)
          first.replace(l.name_begin, l.name_end - l.name_begin, last_of(new_path));
        else if (l.kind == Line::Kind::set && new_path != old_path)
          {
            const std::string name  = last_of(new_path);
            const std::string where = section_path_in(table, join(l.section));
            // Keep the '=' of aligned blocks in its column where the blanks
            // before it allow.
            std::size_t blanks_end = l.name_end;
            while (blanks_end < first.size() && (first[blanks_end] == ' ' || first[blanks_end] == '\t'))
              ++blanks_end;
            const std::size_t old_width = blanks_end - l.name_begin;
            std::string       padded    = name + ' ';
            if (padded.size() < old_width)
              padded.append(old_width - padded.size(), ' ');
            if (name != l.name)
              first.replace(l.name_begin, blanks_end - l.name_begin, padded);
            if (parent_of(new_path) != where)
              {
                // The entry moved to another section: it is set in a block of
                // its own at the end, and its old place says where it went.
                const std::string indent = first.substr(0, first.find_first_not_of(" \t"));
                std::vector<std::string> sections;
                std::stringstream        p(parent_of(new_path));
                for (std::string s; std::getline(p, s, '/');)
                  sections.push_back(s);
                moved << "\n# '" << old_path << "' (line " << l.number << "), now '" << new_path
                      << "'\n";
                for (std::size_t i = 0; i < sections.size(); ++i)
                  moved << std::string(2 * i, ' ') << "subsection " << sections[i] << "\n";
                for (const auto &line : physical)
                  moved << std::string(2 * sections.size(), ' ')
                        << line.substr(line.find_first_not_of(" \t")) << "\n";
                for (std::size_t i = sections.size(); i-- > 0;)
                  moved << std::string(2 * i, ' ') << "end\n";
                out << indent << "# '" << old_path << "' is now '" << new_path
                    << "', set at the end of this file\n";
                continue;
              }
          }
        for (const auto &line : physical)
          out << line << "\n";
      }
    std::string result = out.str();
    // A text without a final newline keeps it that way.
    if (!text.empty() && text.back() != '\n' && moved.str().empty() && !result.empty())
      result.pop_back();
    return result + moved.str();
  }
} // namespace backcomb::simulator
