// Case-file names that were renamed, and how an old case file is converted.
//
// The table in legacy_entries.cc lists every renamed section and entry, one
// line each, as old path -> new path. read_case() refuses a case file or a
// --set that still uses an old name, with the file, the line, the old name
// and its new path; `backcomb upgrade CASE.prm` prints the file with the new
// names (comments, values and layout kept).
#pragma once

#include <string>
#include <vector>

namespace backcomb::simulator
{
  struct Rename
  {
    enum class Kind
    {
      // The last component of a section path is renamed; the entries and
      // subsections inside go with it ("J-V sweep" -> "J-V scan").
      section,
      // One entry gets a new path, in the same section or another one
      // ("J-V sweep/Dark sweep" -> "J-V scan/Dark scan"). The old path is
      // written with the old section names.
      entry
    };
    Kind        kind;
    std::string old_path, new_path;
  };

  // The table of renames, in the order they were made.
  const std::vector<Rename> &renamed_entries();

  // The current path of a section or entry path written with old names (the
  // path itself if nothing in it was renamed).
  std::string current_entry_path(const std::string &path);
  std::string current_section_path(const std::string &section);

  // Throws InputError "file:line: ..." at the first use of an old name in
  // the case-file text, saying what the entry is called now and how to
  // convert the file.
  void refuse_old_names(const std::string &text, const std::string &file);

  // Throws InputError if the --set path `path` uses an old name.
  void refuse_old_override(const std::string &path, const std::string &value);

  // `text` with every old section and entry name replaced by its new one.
  // Lines keep their indentation, values and comments; an entry that moved
  // into another section is taken out of its old place and written, with
  // its value and comment, in a block at the end of the file.
  std::string upgrade_case_text(const std::string &text);
  // The same with another table (for tests of kinds of rename that the
  // shipped table does not contain yet).
  std::string upgrade_case_text(const std::string &text, const std::vector<Rename> &table);
} // namespace backcomb::simulator
