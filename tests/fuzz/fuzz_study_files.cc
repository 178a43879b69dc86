// libFuzzer target for the readers that `merge` and a resumed sweep apply
// to files found in a sweep folder: the JSON parser, the plan reader
// (study::plan_from_json, with the fingerprints it computes) and the
// summary reader (study::read_summary, then every column as CSV, JSON and
// screen text, as the table is written). Contract: every input ends in a
// normal return or an InputError; the summary reader never throws.
#include "base/errors.h"
#include "study/columns.h"
#include "study/plan.h"

#include <nlohmann/json.hpp>

#include <cstddef>
#include <cstdint>
#include <string>

extern "C" int
LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
  using namespace backcomb::study;
  const std::string    text(reinterpret_cast<const char *>(data), size);
  const nlohmann::json j = nlohmann::json::parse(text, nullptr, false);
  if (j.is_discarded())
    return 0; // read_json turns this into an InputError naming the file
  try
    {
      const StudyPlan plan = plan_from_json(j, "fuzz-plan.json");
      volatile std::size_t sink = plan.cases.size();
      for (const auto &c : plan.cases)
        sink += c.fingerprint.size();
      (void)sink;
    }
  catch (const backcomb::InputError &)
    {
      // The documented reaction to a damaged plan.
    }
  StudyRow row;
  read_summary(j, row);
  std::string out;
  for (const auto &c : columns())
    out += c.csv_text(row) + c.screen_text(row) + c.json_value(row).dump();
  volatile std::size_t sink = out.size() + row.reason.size();
  (void)sink;
  return 0;
}
