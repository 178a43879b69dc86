#include "study/layout.h"

#include "base/errors.h"

#include <filesystem>
#include <fstream>

namespace backcomb::study
{
  namespace fs = std::filesystem;

  std::string
  plan_file(const std::string &folder)
  {
    return folder + "/sweep-plan.json";
  }

  std::string
  case_folder(const std::string &folder, const std::string &case_id)
  {
    return folder + "/cases/" + case_id;
  }

  bool
  is_finished(const std::string &folder, const std::string &case_id)
  {
    const std::string dir = case_folder(folder, case_id);
    return fs::exists(dir + "/summary.json") || fs::exists(dir + "/failed.json");
  }

  nlohmann::json
  read_json(const std::string &file)
  {
    std::ifstream in(file);
    if (!in)
      throw InputError(file + ": cannot open for reading");
    try
      {
        return nlohmann::json::parse(in);
      }
    catch (const nlohmann::json::exception &e)
      {
        throw InputError(file + ": not valid JSON (" + e.what() + ")");
      }
  }

  std::string
  first_line(const std::string &text, const std::size_t max_length)
  {
    std::string line = text.substr(0, text.find('\n'));
    if (line.size() > max_length)
      line = line.substr(0, max_length - 3) + "...";
    return line;
  }
} // namespace backcomb::study
