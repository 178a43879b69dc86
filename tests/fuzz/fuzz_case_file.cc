// libFuzzer target for the case-file reader (simulator::read_case).
//
// The input is the text of a case file. Lines after a line "--set" are
// passed as command-line overrides instead, so that the override path is
// fuzzed too. Contract: every input ends in a normal return or an
// InputError; anything else (another exception, a crash, a sanitizer
// report, a hang) is a bug in the reader.
#include "base/entries.h"
#include "simulator/case_file.h"

#include <cstddef>
#include <cstdint>
#include <sstream>
#include <string>
#include <vector>

extern "C" int
LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
  const std::string text(reinterpret_cast<const char *>(data), size);

  std::string              case_text = text;
  std::vector<std::string> overrides;
  const std::string        marker = "\n--set\n";
  if (const auto at = text.find(marker); at != std::string::npos)
    {
      case_text = text.substr(0, at + 1);
      std::istringstream rest(text.substr(at + marker.size()));
      for (std::string line; std::getline(rest, line);)
        overrides.push_back(line);
    }

  try
    {
      std::istringstream in(case_text);
      // A bare file name: relative data-file paths stay relative, and no
      // data file is opened by read_case itself.
      backcomb::simulator::read_case(in, "fuzz.prm", overrides);
    }
  catch (const backcomb::InputError &)
    {
      // The documented reaction to bad input.
    }
  return 0;
}
