#include "study/study.h"

#include "base/entries.h"
#include "simulator/case_file.h"
#include "base/files.h"
#include "simulator/case_run.h"
#include "postprocess/plots.h"

#include <deal.II/base/parameter_handler.h>

#include <mpi.h>
#include <nlohmann/json.hpp>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdio>
#include <cstring>
#include <fcntl.h>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <map>
#include <mutex>
#include <set>
#include <sstream>
#include <thread>
#include <unistd.h>

namespace backcomb::study
{
  using json   = nlohmann::json;
  using namespace backcomb::simulator;
  using namespace backcomb::postprocess;
  namespace fs = std::filesystem;

  namespace
  {
    constexpr double      nan          = std::numeric_limits<double>::quiet_NaN();
    constexpr std::size_t max_values   = 10000;  // per swept entry
    constexpr std::size_t max_cases    = 100000; // per grid
    const char *const     plan_format  = "backcomb sweep plan 1";

    std::string
    trim(const std::string &s)
    {
      const auto b = s.find_first_not_of(" \t\r\n");
      if (b == std::string::npos)
        return "";
      return s.substr(b, s.find_last_not_of(" \t\r\n") - b + 1);
    }

    // The whole text as one finite number, or nothing.
    std::optional<double>
    to_number(const std::string &text)
    {
      const std::string t = trim(text);
      if (t.empty())
        return std::nullopt;
      char        *end = nullptr;
      const double v   = std::strtod(t.c_str(), &end);
      if (end != t.c_str() + t.size() || !std::isfinite(v))
        return std::nullopt;
      return v;
    }

    std::string
    format_number(double v, int digits)
    {
      char buffer[64];
      std::snprintf(buffer, sizeof buffer, "%.*g", digits, v);
      return buffer;
    }

    std::vector<std::string>
    split(const std::string &text, char separator)
    {
      std::vector<std::string> parts;
      std::string              part;
      std::istringstream       in(text);
      while (std::getline(in, part, separator))
        parts.push_back(part);
      if (!text.empty() && text.back() == separator)
        parts.emplace_back();
      return parts;
    }

    // Expands one "start:stop:step" or "start:stop:xN" item.
    std::vector<std::string>
    expand_range(const std::string &entry, const std::string &item)
    {
      const auto parts = split(item, ':');
      if (parts.size() != 3)
        throw InputError(entry, item, "a range is start:stop:step or start:stop:xN");
      const auto start = to_number(parts[0]), stop = to_number(parts[1]);
      if (!start || !stop)
        throw InputError(entry, item, "the start and stop of a range must be numbers");
      const std::string third = trim(parts[2]);
      std::vector<std::string> values;
      if (!third.empty() && (third[0] == 'x' || third[0] == 'X'))
        {
          // Geometric: N values with a constant ratio between neighbours.
          const auto n = to_number(third.substr(1));
          if (!n || *n != std::floor(*n) || *n < 2 || *n > double(max_values))
            throw InputError(entry, item, "xN needs a whole number N of values, 2 <= N <= 10000");
          if (!(*start > 0 && *stop > 0))
            throw InputError(entry, item, "a geometric range needs start > 0 and stop > 0");
          const long count = long(*n);
          for (long i = 0; i < count; ++i)
            {
              const double v = i == 0           ? *start
                               : i == count - 1 ? *stop
                                                : *start * std::pow(*stop / *start, double(i) / (count - 1));
              values.push_back(format_number(v, 6));
            }
          return values;
        }
      const auto step = to_number(third);
      if (!step || *step == 0)
        throw InputError(entry, item, "the step of a range must be a non-zero number");
      if ((*stop - *start) * *step < 0)
        throw InputError(entry, item, "the step points away from stop: use a negative step to count down");
      const double steps = (*stop - *start) / *step;
      if (steps + 1 > double(max_values))
        throw InputError(entry, item, "gives more than 10000 values");
      // The tolerance keeps stop when rounding puts it a hair beyond it.
      const long count = long(std::floor(steps + 1e-9)) + 1;
      for (long i = 0; i < count; ++i)
        {
          double v = *start + i * *step;
          if (std::abs(v) < 1e-12 * std::abs(*step))
            v = 0; // 0.1 - 0.1 style residue
          values.push_back(format_number(v, 12));
        }
      return values;
    }

    // deal.II's mangling of entry and section names in its JSON output.
    std::string
    mangle(const std::string &s)
    {
      static const char hex[] = "0123456789abcdef";
      std::string       out;
      for (const char c : s)
        if (std::isalnum(static_cast<unsigned char>(c)) && s != "value")
          out += c;
        else
          out += std::string("_") + hex[static_cast<unsigned char>(c) / 16] +
                 hex[static_cast<unsigned char>(c) % 16];
      return out;
    }

    // The documentation string of a case-file entry; nullopt if no such
    // entry is declared.
    std::optional<std::string>
    documentation_of(const std::string &path)
    {
      static json tree;
      if (tree.is_null())
        {
          dealii::ParameterHandler prm;
          declare_case(prm);
          std::ostringstream out;
          prm.print_parameters(out, dealii::ParameterHandler::JSON);
          tree = json::parse(out.str());
        }
      const json *node = &tree;
      for (const auto &part : split(path, '/'))
        {
          if (node->is_object() && node->contains(part))
            node = &(*node)[part];
          else if (node->is_object() && node->contains(mangle(part)))
            node = &(*node)[mangle(part)];
          else
            return std::nullopt;
        }
      if (!node->is_object() || !node->contains("value"))
        return std::nullopt; // a section, not an entry
      return node->value("documentation", std::string());
    }

    // The unit an entry's documentation states ("..., in um; > 0.").
    std::string
    unit_from_documentation(const std::string &doc)
    {
      // Longest first, so that "suns" is not read as "s".
      static const std::vector<std::string> units = {
        "cm^-3 s^-1", "cm^2/(V s)", "mA/cm^2", "cm^3/s", "cm^6/s", "cm^-3", "cm/s",
        "kT/q",       "suns",       "um",      "nm",     "eV",     "K",     "V",     "s"};
      for (std::size_t at = doc.find(" in "); at != std::string::npos; at = doc.find(" in ", at + 1))
        {
          const std::string rest = doc.substr(at + 4);
          for (const auto &u : units)
            if (rest.compare(0, u.size(), u) == 0 &&
                (rest.size() == u.size() || std::strchr(" ,;.)", rest[u.size()])))
              return u;
        }
      return "";
    }

    // Folder-name-safe text: letters, digits and . + - kept, others '_'.
    std::string
    sanitised(const std::string &s)
    {
      std::string out;
      for (const char c : s)
        out += (std::isalnum(static_cast<unsigned char>(c)) || std::strchr(".+-", c)) ? c : '_';
      return out;
    }

    std::string
    last_component(const std::string &path)
    {
      return path.substr(path.rfind('/') + 1);
    }

    // ------------------------------------------------------------------
    // The plan as JSON.

    json
    plan_to_json(const SweepPlan &plan)
    {
      json j;
      j["format"]    = plan_format;
      j["case_file"] = plan.case_file;
      j["case_text"] = plan.case_text;
      j["sets"]      = plan.sets;
      j["entries"]   = json::array();
      for (const auto &e : plan.entries)
        j["entries"].push_back({{"path", e.path}, {"unit", e.unit}, {"values", e.values}});
      j["cases"] = json::array();
      for (const auto &c : plan.cases)
        j["cases"].push_back({{"id", c.id},
                              {"values", c.values},
                              {"overrides", c.overrides},
                              {"pitch_um", std::isfinite(c.pitch_um) ? json(c.pitch_um) : json(nullptr)}});
      return j;
    }

    SweepPlan
    plan_from_json(const json &j, const std::string &file)
    {
      if (!j.is_object() || j.value("format", "") != plan_format)
        throw InputError(file + ": not a backcomb sweep plan");
      try
        {
          SweepPlan plan;
          plan.case_file = j.at("case_file").get<std::string>();
          plan.case_text = j.at("case_text").get<std::string>();
          plan.sets      = j.at("sets").get<std::vector<std::string>>();
          for (const auto &e : j.at("entries"))
            plan.entries.push_back({e.at("path").get<std::string>(),
                                    e.at("values").get<std::vector<std::string>>(),
                                    e.at("unit").get<std::string>()});
          for (const auto &c : j.at("cases"))
            {
              SweepCase sc;
              sc.id        = c.at("id").get<std::string>();
              sc.values    = c.at("values").get<std::vector<std::string>>();
              sc.overrides = c.at("overrides").get<std::vector<std::string>>();
              sc.pitch_um  = c.at("pitch_um").is_number() ? c.at("pitch_um").get<double>() : nan;
              plan.cases.push_back(std::move(sc));
            }
          return plan;
        }
      catch (const json::exception &e)
        {
          throw InputError(file + ": damaged sweep plan (" + e.what() + ")");
        }
    }

    json
    read_json(const std::string &file)
    {
      std::ifstream in(file);
      if (!in)
        throw InputError(file + ": cannot open for reading");
      try
        {
          return json::parse(in);
        }
      catch (const json::exception &e)
        {
          throw InputError(file + ": not valid JSON (" + e.what() + ")");
        }
    }

    // Why `existing` (the plan found in the folder) is not `wanted`, or "".
    std::string
    plan_difference(const SweepPlan &existing, const SweepPlan &wanted)
    {
      if (existing.case_text != wanted.case_text)
        return "the case file's text differs";
      if (existing.sets != wanted.sets)
        return "the --set overrides differ";
      if (existing.entries.size() != wanted.entries.size())
        return "the number of --vary entries differs";
      for (std::size_t k = 0; k < wanted.entries.size(); ++k)
        if (existing.entries[k].path != wanted.entries[k].path ||
            existing.entries[k].values != wanted.entries[k].values)
          return "the --vary entry " + wanted.entries[k].path + " or its values differ";
      return "";
    }

    std::string
    plan_file(const std::string &folder)
    {
      return folder + "/sweep-plan.json";
    }

    std::string
    case_folder(const std::string &folder, const SweepCase &c)
    {
      return folder + "/cases/" + c.id;
    }

    // ------------------------------------------------------------------
    // Running one case.

    // Sends this process's standard output and error to a file while it
    // lives: the solve's own messages go to the case's solve.log, and the
    // sweep's log keeps one line per case.
    class OutputToFile
    {
    public:
      explicit OutputToFile(const std::string &file)
      {
        std::cout.flush(), std::cerr.flush();
        std::fflush(stdout), std::fflush(stderr);
        const int fd = ::open(file.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0644);
        if (fd < 0)
          return;
        saved_out = ::dup(1), saved_err = ::dup(2);
        ::dup2(fd, 1), ::dup2(fd, 2);
        ::close(fd);
      }
      ~OutputToFile()
      {
        if (saved_out < 0)
          return;
        std::cout.flush(), std::cerr.flush();
        std::fflush(stdout), std::fflush(stderr);
        ::dup2(saved_out, 1), ::dup2(saved_err, 2);
        ::close(saved_out), ::close(saved_err);
      }
      OutputToFile(const OutputToFile &) = delete;
      OutputToFile &operator=(const OutputToFile &) = delete;

    private:
      int saved_out = -1, saved_err = -1;
    };

    std::optional<double>
    number_at(const json &j, const std::string &key)
    {
      if (j.is_object() && j.contains(key) && j.at(key).is_number())
        return j.at(key).get<double>();
      return std::nullopt;
    }

    std::string
    first_line(const std::string &text, std::size_t max_length = 300)
    {
      std::string line = text.substr(0, text.find('\n'));
      if (line.size() > max_length)
        line = line.substr(0, max_length - 3) + "...";
      return line;
    }

    // A row from the files of a case folder: summary.json, failed.json or
    // neither (missing).
    SweepRow
    read_case_result(const std::string &folder, const SweepCase &c)
    {
      SweepRow r;
      r.id       = c.id;
      r.values   = c.values;
      r.pitch_um = c.pitch_um;
      const std::string dir = case_folder(folder, c);
      if (fs::exists(dir + "/summary.json"))
        {
          json s;
          try
            {
              s = read_json(dir + "/summary.json");
            }
          catch (const InputError &e)
            {
              r.status = "failed";
              r.reason = e.what();
              return r;
            }
          r.status = s.value("status", std::string("failed"));
          if (s.contains("failures") && s["failures"].is_array() && !s["failures"].empty() &&
              s["failures"][0].is_string())
            r.reason = first_line(s["failures"][0].get<std::string>());
          r.footprint_width_um = number_at(s, "footprint_width_um");
          r.active_width_um    = number_at(s, "active_width_um");
          if (s.contains("newton") && s["newton"].is_object())
            {
              const json &n = s["newton"];
              r.newton_iterations =
                unsigned(number_at(n, "light_iterations").value_or(0) + number_at(n, "dark_iterations").value_or(0));
              r.step_halvings =
                unsigned(number_at(n, "light_halvings").value_or(0) + number_at(n, "dark_halvings").value_or(0));
            }
          if (s.contains("timings_s"))
            r.seconds = number_at(s["timings_s"], "total");
          // Metrics only where the case produced them; a failed case has
          // none, whatever its summary holds.
          if (r.status != "failed")
            {
              r.collection_efficiency = number_at(s, "collection_efficiency");
              // The dead-zone area fraction of the absorber, where the case
              // computed one (it needs the fields at short circuit).
              if (s.contains("dead_zone") && s["dead_zone"].is_object())
                r.dead_zone_fraction = number_at(s["dead_zone"], "area_fraction");
              if (s.contains("losses") && s["losses"].is_object() && s["losses"].contains("points") &&
                  s["losses"]["points"].contains("max_power"))
                {
                  const json &split = s["losses"]["points"]["max_power"]["split"];
                  r.loss_recombination = number_at(split, "recombination");
                  r.loss_film_joule    = number_at(split, "film_joule");
                  r.loss_contacts      = number_at(split, "contacts");
                  if (s["losses"].contains("electrodes_at_cell_max_power"))
                    {
                      const json &e = s["losses"]["electrodes_at_cell_max_power"];
                      const auto  f = number_at(e, "fingers"), k = number_at(e, "contact_resistance");
                      if (f && k)
                        r.loss_electrodes = *f + *k;
                    }
                }
              if (s.contains("cell") && s["cell"].is_object() && s["cell"].contains("metrics") &&
                  s["cell"]["metrics"].is_object())
                r.PCE_cell = number_at(s["cell"]["metrics"], "PCE_percent");
              if (s.contains("series_resistance") && s["series_resistance"].is_object())
                r.series_resistance = number_at(s["series_resistance"], "total_ohm_cm2");
              if (s.contains("metrics") && s["metrics"].is_object())
                {
                  const json &m = s["metrics"];
                  r.Jsc = number_at(m, "Jsc_mA_per_cm2");
                  r.Voc = number_at(m, "Voc_V");
                  r.FF  = number_at(m, "FF");
                  r.PCE = number_at(m, "PCE_percent");
                  if (m.contains("per_active_area"))
                    {
                      r.Jsc_active = number_at(m["per_active_area"], "Jsc_mA_per_cm2");
                      r.PCE_active = number_at(m["per_active_area"], "PCE_percent");
                    }
                }
            }
          else if (r.reason.empty())
            r.reason = "failed without a diagnostic (see " + dir + "/solve.log)";
        }
      else if (fs::exists(dir + "/failed.json"))
        {
          r.status = "failed";
          try
            {
              const json f = read_json(dir + "/failed.json");
              r.reason     = f.value("reason", std::string("unknown"));
              r.seconds    = number_at(f, "seconds");
            }
          catch (const InputError &e)
            {
              r.reason = e.what();
            }
        }
      else
        {
          r.status = "missing";
          r.reason = "not computed yet";
        }
      return r;
    }

    bool
    is_finished(const std::string &folder, const SweepCase &c)
    {
      const std::string dir = case_folder(folder, c);
      return fs::exists(dir + "/summary.json") || fs::exists(dir + "/failed.json");
    }

    std::size_t
    count_finished(const std::string &folder, const SweepPlan &plan)
    {
      std::size_t n = 0;
      for (const auto &c : plan.cases)
        n += is_finished(folder, c);
      return n;
    }

    // Runs the full pipeline for one case in a clean folder. Whatever goes
    // wrong ends as a failed case: summary.json with status "failed" when
    // the solve got that far, failed.json with the reason otherwise.
    SweepRow
    run_case(const SweepPlan &plan, const SweepCase &c, const std::string &folder)
    {
      const std::string dir = case_folder(folder, c);
      // Leftovers of an interrupted run go, except the J-V checkpoint, from
      // which the solve continues where it stopped (it carries its own
      // fingerprint and is discarded if it belongs to other input).
      std::error_code ec;
      if (fs::is_directory(dir, ec))
        {
          std::vector<fs::path> old;
          for (const auto &e : fs::directory_iterator(dir, ec))
            if (e.path().filename() != "checkpoint")
              old.push_back(e.path());
          for (const auto &f : old)
            fs::remove_all(f, ec);
        }
      else
        fs::remove_all(dir, ec);
      make_folder(dir);
      const auto  t0   = std::chrono::steady_clock::now();
      int         code = exit_internal;
      std::string reason;
      {
        OutputToFile log(dir + "/solve.log");
        try
          {
            const Case case_data = read_case(plan.case_file, c.overrides);
            RunOptions options;
            options.folder       = dir;
            options.quiet        = false;
            options.communicator = MPI_COMM_SELF;
            code                 = run_solve(case_data, options);
          }
        catch (const InputError &e)
          {
            code   = exit_input;
            reason = std::string("invalid input: ") + e.what();
          }
        catch (const OutputError &e)
          {
            code   = exit_io;
            reason = std::string("output error: ") + e.what();
          }
        catch (const std::exception &e)
          {
            code   = exit_internal;
            reason = std::string("internal error: ") + e.what();
          }
        catch (...)
          {
            code   = exit_internal;
            reason = "internal error: unknown exception";
          }
        if (!reason.empty())
          std::fprintf(stderr, "backcomb sweep: case %s: %s\n", c.id.c_str(), reason.c_str());
      }
      const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      if (!fs::exists(dir + "/summary.json"))
        {
          if (reason.empty())
            reason = "the solve ended with exit code " + std::to_string(code) + " without a summary";
          const json failed = {{"status", "failed"},
                               {"reason", first_line(reason, 2000)},
                               {"exit_code", code},
                               {"seconds", seconds},
                               {"log", "solve.log"}};
          write_file_atomically(dir + "/failed.json", failed.dump(2) + "\n");
        }
      SweepRow r = read_case_result(folder, c);
      r.seconds  = seconds;
      return r;
    }

    std::string
    duration_text(double seconds)
    {
      const long s = std::lround(std::max(0.0, seconds));
      char       buffer[32];
      if (s >= 3600)
        std::snprintf(buffer, sizeof buffer, "%ldh%02ldm", s / 3600, (s / 60) % 60);
      else
        std::snprintf(buffer, sizeof buffer, "%ldm%02lds", s / 60, s % 60);
      return buffer;
    }

    // Progress of this process's share. On a terminal (one process, not
    // quiet) a line that is redrawn every second; otherwise one line per
    // finished case, for batch logs. The count of finished cases is of the
    // whole plan, read from the case folders, so it includes the cases of
    // other ranks and tasks; the estimate of the time left is this
    // process's: its mean time per case times its cases still to run.
    class SweepProgress
    {
    public:
      SweepProgress(const std::string &folder, const SweepPlan &plan, std::size_t to_run, bool quiet,
                    int n_processes, int rank)
        : folder(folder)
        , plan(plan)
        , quiet(quiet)
        , rank_tag(n_processes > 1 ? "rank " + std::to_string(rank) + ": " : "")
        , terminal(!quiet && n_processes == 1 && ::isatty(2))
        , start(std::chrono::steady_clock::now())
        , to_run(to_run)
        , done(count_finished(folder, plan))
      {
        if (terminal)
          {
            terminal_fd = ::dup(2);
            ticker      = std::thread([this] { tick(); });
          }
      }

      ~SweepProgress()
      {
        if (terminal)
          {
            {
              std::lock_guard<std::mutex> lock(mutex);
              stop = true;
            }
            wake.notify_all();
            ticker.join();
            const std::string blank = "\r" + std::string(100, ' ') + "\r";
            (void)!::write(terminal_fd, blank.data(), blank.size());
            ::close(terminal_fd);
          }
      }

      void
      starting(const SweepCase &c)
      {
        std::lock_guard<std::mutex> lock(mutex);
        running       = c.id;
        running_since = std::chrono::steady_clock::now();
      }

      void
      finished(const SweepRow &r)
      {
        std::lock_guard<std::mutex> lock(mutex);
        done    = count_finished(folder, plan);
        ++computed;
        running = "";
        if (quiet)
          return;
        std::ostringstream line;
        line << "sweep: " << rank_tag << "[" << done << "/" << plan.cases.size() << "] " << r.id << " "
             << r.status;
        if (r.seconds)
          line << " in " << format_number(*r.seconds, 3) << " s";
        if (r.PCE)
          line << ": PCE " << format_number(*r.PCE, 4) << " %";
        if (r.collection_efficiency)
          line << ", collection efficiency " << format_number(*r.collection_efficiency, 4);
        if (r.status == "failed")
          line << ": " << first_line(r.reason, 160);
        line << "; " << estimate();
        if (terminal)
          {
            const std::string blank = "\r" + std::string(100, ' ') + "\r";
            (void)!::write(terminal_fd, blank.data(), blank.size());
          }
        std::printf("%s\n", line.str().c_str());
        std::fflush(stdout);
      }

    private:
      double
      elapsed() const
      {
        return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      }

      // "elapsed 2m10s, about 3m00s left" from this process's rate.
      std::string
      estimate() const
      {
        std::string       text = "elapsed " + duration_text(elapsed());
        const std::size_t left = to_run - std::min(computed, to_run);
        if (left == 0)
          return text;
        if (computed == 0)
          return text + ", estimate after the first case";
        return text + ", about " + duration_text(elapsed() / computed * left) + " left" +
               (rank_tag.empty() ? "" : " for this rank");
      }

      void
      tick()
      {
        std::unique_lock<std::mutex> lock(mutex);
        while (!stop)
          {
            std::string line = "\rsweep: " + std::to_string(done) + "/" + std::to_string(plan.cases.size()) +
                               " cases done, " + estimate();
            if (!running.empty())
              line += "; running " + running + " (" +
                      duration_text(std::chrono::duration<double>(std::chrono::steady_clock::now() -
                                                                  running_since)
                                      .count()) +
                      ")";
            if (line.size() > 100)
              line = line.substr(0, 100);
            line += std::string(101 - line.size(), ' ');
            (void)!::write(terminal_fd, line.data(), line.size());
            wake.wait_for(lock, std::chrono::seconds(1));
          }
      }

      const std::string                     folder;
      const SweepPlan                      &plan;
      const bool                            quiet;
      const std::string                     rank_tag;
      const bool                            terminal;
      const std::chrono::steady_clock::time_point start;
      const std::size_t                     to_run; // by this process in this run
      std::size_t                           done;   // finished cases of the whole plan
      std::size_t                           computed = 0;
      std::string                           running;
      std::chrono::steady_clock::time_point running_since;
      int                                   terminal_fd = -1;
      std::mutex                            mutex;
      std::condition_variable               wake;
      bool                                  stop = false;
      std::thread                           ticker;
    };

    // ------------------------------------------------------------------
    // Merging.

    std::string
    csv_field(const std::string &s)
    {
      if (s.find_first_of(",\"\n") == std::string::npos)
        return s;
      std::string out = "\"";
      for (const char c : s)
        out += c == '"' ? std::string("\"\"") : c == '\n' ? std::string(" ") : std::string(1, c);
      return out + "\"";
    }

    // Seven significant digits: more than the model's accuracy, and the
    // same text from serial, MPI and array-job runs.
    template <typename T>
    std::string
    csv_number(const std::optional<T> &v)
    {
      if (!v)
        return "";
      if constexpr (std::is_integral_v<T>)
        return std::to_string(*v);
      else
        return std::isfinite(*v) ? format_number(*v, 7) : "";
    }

    template <typename T>
    json
    json_number(const std::optional<T> &v)
    {
      return (v && std::isfinite(double(*v))) ? json(*v) : json(nullptr);
    }

    std::string
    entry_header(const SweptEntry &e)
    {
      return e.unit.empty() ? e.path : e.path + " [" + e.unit + "]";
    }

    std::string
    with_unit(const std::string &value, const std::string &unit)
    {
      return unit.empty() ? value : value + " " + unit;
    }

    bool
    all_numeric(const std::vector<std::string> &values)
    {
      return std::all_of(values.begin(), values.end(), [](const std::string &v) { return to_number(v).has_value(); });
    }

    // Rows sharing the values of every entry but the first (one line of the
    // plot), each line ordered by the first entry's value.
    std::vector<std::vector<std::size_t>>
    lines_of(const SweepPlan &plan, const std::vector<SweepRow> &rows)
    {
      std::map<std::vector<std::string>, std::size_t> index;
      std::vector<std::vector<std::size_t>>           lines;
      for (std::size_t i = 0; i < rows.size(); ++i)
        {
          const std::vector<std::string> rest(rows[i].values.begin() + 1, rows[i].values.end());
          const auto [it, fresh] = index.emplace(rest, lines.size());
          if (fresh)
            lines.emplace_back();
          lines[it->second].push_back(i);
        }
      if (all_numeric(plan.entries[0].values))
        for (auto &line : lines)
          std::stable_sort(line.begin(), line.end(), [&](std::size_t a, std::size_t b) {
            return *to_number(rows[a].values[0]) < *to_number(rows[b].values[0]);
          });
      return lines;
    }

    std::string
    other_values_text(const SweepPlan &plan, const SweepRow &row)
    {
      std::string text;
      for (std::size_t k = 1; k < plan.entries.size(); ++k)
        text += (k > 1 ? ", " : "") + plan.entries[k].path + " = " + with_unit(row.values[k], plan.entries[k].unit);
      return text;
    }

    void
    write_csv(const std::string &folder, const SweepPlan &plan, const std::vector<SweepRow> &rows)
    {
      std::ostringstream csv;
      csv << "# backcomb sweep of " << plan.case_file << "; one row per case, in the order of sweep-plan.json\n"
          << "# pitch_um: electrode pitch w_e + w_h + 2 gap, the distance between the centres of "
             "neighbouring fingers of the same polarity (twice the simulated period width)\n"
          << "# metrics per footprint (the whole period) unless named _active (per active area, "
             "Device/Active area); collection_efficiency = Jsc / (q * generation integrated over the absorber)\n"
          << "# dead_zone_fraction: absorber area fraction with collection probability below the "
             "case's threshold (summary.json dead_zone)\n"
          << "# loss_*: power lost at the maximum power point in mW/cm^2 of footprint (losses.csv of the case "
             "has every term): recombination = bulk + surfaces + minority carriers at the combs, film_joule = "
             "Joule heat of both carriers, contacts = majority carriers crossing the combs; electrodes = "
             "finger and contact resistance of the whole comb cell (Electrodes section) at its maximum power point\n"
          << "# PCE_cell_percent: the whole comb cell with its fingers; series_resistance_ohm_cm2: from suns-Voc "
             "against the light J-V at the maximum power point (summary.json series_resistance has the split)\n"
          << "# an empty cell means not available: a failed or missing case, or a quantity the case "
             "did not compute\n";
      csv << "case";
      for (const auto &e : plan.entries)
        csv << ',' << csv_field(entry_header(e));
      csv << ",pitch_um,footprint_width_um,active_width_um,collection_efficiency,Jsc_mA_per_cm2,Voc_V,FF,"
             "PCE_percent,Jsc_active_mA_per_cm2,PCE_active_percent,dead_zone_fraction,"
             "loss_recombination_mW_per_cm2,loss_film_joule_mW_per_cm2,loss_contacts_mW_per_cm2,"
             "loss_electrodes_mW_per_cm2,PCE_cell_percent,series_resistance_ohm_cm2,newton_iterations,"
             "step_halvings,status,reason\n";
      for (const auto &r : rows)
        {
          csv << csv_field(r.id);
          for (const auto &v : r.values)
            csv << ',' << csv_field(v);
          csv << ',' << csv_number(std::isfinite(r.pitch_um) ? std::optional<double>(r.pitch_um) : std::nullopt)
              << ',' << csv_number(r.footprint_width_um) << ',' << csv_number(r.active_width_um) << ','
              << csv_number(r.collection_efficiency) << ',' << csv_number(r.Jsc) << ',' << csv_number(r.Voc)
              << ',' << csv_number(r.FF) << ',' << csv_number(r.PCE) << ',' << csv_number(r.Jsc_active)
              << ',' << csv_number(r.PCE_active) << ',' << csv_number(r.dead_zone_fraction) << ','
              << csv_number(r.loss_recombination) << ',' << csv_number(r.loss_film_joule) << ','
              << csv_number(r.loss_contacts) << ',' << csv_number(r.loss_electrodes) << ','
              << csv_number(r.PCE_cell) << ',' << csv_number(r.series_resistance) << ','
              << csv_number(r.newton_iterations) << ',' << csv_number(r.step_halvings) << ','
              << r.status << ',' << csv_field(r.reason) << '\n';
        }
      write_file_atomically(folder + "/sweep.csv", csv.str());
    }

    json
    row_json(const SweepPlan &plan, const SweepRow &r)
    {
      json values = json::object();
      for (std::size_t k = 0; k < plan.entries.size(); ++k)
        values[plan.entries[k].path] = r.values[k];
      return {{"id", r.id},
              {"folder", "cases/" + r.id},
              {"values", values},
              {"pitch_um", std::isfinite(r.pitch_um) ? json(r.pitch_um) : json(nullptr)},
              {"footprint_width_um", json_number(r.footprint_width_um)},
              {"active_width_um", json_number(r.active_width_um)},
              {"collection_efficiency", json_number(r.collection_efficiency)},
              {"Jsc_mA_per_cm2", json_number(r.Jsc)},
              {"Voc_V", json_number(r.Voc)},
              {"FF", json_number(r.FF)},
              {"PCE_percent", json_number(r.PCE)},
              {"per_active_area",
               {{"Jsc_mA_per_cm2", json_number(r.Jsc_active)}, {"PCE_percent", json_number(r.PCE_active)}}},
              {"dead_zone_fraction", json_number(r.dead_zone_fraction)},
              {"losses_at_max_power_mW_per_cm2",
               {{"recombination", json_number(r.loss_recombination)},
                {"film_joule", json_number(r.loss_film_joule)},
                {"contacts", json_number(r.loss_contacts)},
                {"electrodes", json_number(r.loss_electrodes)}}},
              {"PCE_cell_percent", json_number(r.PCE_cell)},
              {"series_resistance_ohm_cm2", json_number(r.series_resistance)},
              {"newton_iterations", json_number(r.newton_iterations)},
              {"step_halvings", json_number(r.step_halvings)},
              {"seconds", json_number(r.seconds)},
              {"status", r.status},
              {"reason", r.reason.empty() ? json(nullptr) : json(r.reason)}};
    }

    // ParaView collections of the cases' field files: one per field bias,
    // indexed by the first swept value (1-D numeric sweeps) or by the case
    // index in the plan (grids).
    std::vector<std::string>
    write_field_collections(const std::string &folder, const SweepPlan &plan, const std::vector<SweepRow> &rows)
    {
      const bool by_value = plan.entries.size() == 1 && all_numeric(plan.entries[0].values);
      std::map<std::string, std::vector<std::pair<double, std::string>>> by_bias;
      for (std::size_t i = 0; i < rows.size(); ++i)
        {
          if (rows[i].status != "converged" && rows[i].status != "partial")
            continue;
          json s;
          try
            {
              s = read_json(case_folder(folder, plan.cases[i]) + "/summary.json");
            }
          catch (const InputError &)
            {
              continue;
            }
          if (!s.contains("fields") || !s["fields"].is_array())
            continue;
          for (const auto &f : s["fields"])
            if (f.contains("bias_V") && f["bias_V"].is_number() && f.contains("file") && f["file"].is_string())
              {
                char bias[32];
                std::snprintf(bias, sizeof bias, "%.4f", f["bias_V"].get<double>());
                by_bias[bias].emplace_back(by_value ? *to_number(rows[i].values[0]) : double(i),
                                           "cases/" + rows[i].id + "/" + f["file"].get<std::string>());
              }
        }
      std::vector<std::string> written;
      for (auto &[bias, sets] : by_bias)
        {
          std::stable_sort(sets.begin(), sets.end());
          std::ostringstream pvd;
          pvd << "<?xml version=\"1.0\"?>\n<VTKFile type=\"Collection\" version=\"0.1\">\n<Collection>\n";
          for (const auto &[t, file] : sets)
            pvd << "<DataSet timestep=\"" << format_number(t, 12) << "\" file=\"" << file << "\"/>\n";
          pvd << "</Collection>\n</VTKFile>\n";
          const std::string name = "sweep-fields_V" + bias + ".pvd";
          write_file_atomically(folder + "/" + name, pvd.str());
          written.push_back(name);
        }
      return written;
    }

    void
    print_table(const SweepPlan &plan, const std::vector<SweepRow> &rows)
    {
      std::vector<std::string> header;
      for (const auto &e : plan.entries)
        header.push_back(last_component(e.path) + (e.unit.empty() ? "" : " (" + e.unit + ")"));
      const std::vector<std::string> metrics = {"pitch (um)", "collection", "dead zone", "Jsc (mA/cm2)",
                                                "Voc (V)",    "FF",         "PCE (%)",   "PCE act (%)",
                                                "recomb.",    "Joule",      "contacts",  "electr.",
                                                "PCE cell",   "Rs",         "status"};
      header.insert(header.end(), metrics.begin(), metrics.end());
      std::vector<std::vector<std::string>> cells;
      auto fixed = [](const std::optional<double> &v, int digits) {
        if (!v || !std::isfinite(*v))
          return std::string("-");
        char buffer[64];
        std::snprintf(buffer, sizeof buffer, "%.*f", digits, *v);
        return std::string(buffer);
      };
      for (const auto &r : rows)
        {
          std::vector<std::string> row = r.values;
          row.push_back(fixed(std::isfinite(r.pitch_um) ? std::optional<double>(r.pitch_um) : std::nullopt, 1));
          row.push_back(fixed(r.collection_efficiency, 4));
          row.push_back(fixed(r.dead_zone_fraction, 3));
          row.push_back(fixed(r.Jsc, 3));
          row.push_back(fixed(r.Voc, 4));
          row.push_back(fixed(r.FF, 4));
          row.push_back(fixed(r.PCE, 3));
          row.push_back(fixed(r.PCE_active, 3));
          row.push_back(fixed(r.loss_recombination, 3));
          row.push_back(fixed(r.loss_film_joule, 3));
          row.push_back(fixed(r.loss_contacts, 3));
          row.push_back(fixed(r.loss_electrodes, 3));
          row.push_back(fixed(r.PCE_cell, 3));
          row.push_back(fixed(r.series_resistance, 3));
          row.push_back(r.status);
          cells.push_back(row);
        }
      std::vector<std::size_t> width(header.size());
      for (std::size_t k = 0; k < header.size(); ++k)
        {
          width[k] = header[k].size();
          for (const auto &row : cells)
            width[k] = std::max(width[k], row[k].size());
        }
      auto print_row = [&](const std::vector<std::string> &row) {
        std::string line;
        for (std::size_t k = 0; k < row.size(); ++k)
          {
            const std::string pad(width[k] - row[k].size(), ' ');
            // Text left-aligned in the last column, numbers right-aligned.
            line += (k ? " | " : "") + (k + 1 == row.size() ? row[k] + pad : pad + row[k]);
          }
        std::printf("%s\n", line.c_str());
      };
      print_row(header);
      std::size_t total = 0;
      for (const auto w : width)
        total += w + 3;
      std::printf("%s\n", std::string(total - 3, '-').c_str());
      for (const auto &row : cells)
        print_row(row);
      for (const auto &r : rows)
        if (r.status == "failed")
          std::printf("  %s failed: %s\n", r.id.c_str(), r.reason.c_str());
    }
  } // namespace

  // --------------------------------------------------------------------
  // Value lists and the plan.

  std::vector<std::string>
  expand_values(const std::string &entry, const std::string &list)
  {
    if (trim(list).empty())
      throw InputError(entry, list, "the value list is empty");
    std::vector<std::string> values;
    for (const auto &raw : split(list, ','))
      {
        const std::string item = trim(raw);
        if (item.empty())
          throw InputError(entry, list, "empty item in the comma-separated value list");
        if (item.find(':') != std::string::npos)
          {
            const auto range = expand_range(entry, item);
            values.insert(values.end(), range.begin(), range.end());
          }
        else
          values.push_back(item);
        if (values.size() > max_values)
          throw InputError(entry, list, "more than 10000 values");
      }
    for (std::size_t i = 0; i < values.size(); ++i)
      for (std::size_t j = 0; j < i; ++j)
        {
          const auto a = to_number(values[i]), b = to_number(values[j]);
          if (values[i] == values[j] || (a && b && *a == *b))
            throw InputError(entry, values[i], "appears twice in the value list");
        }
    return values;
  }

  SweptEntry
  parse_vary(const std::string &text)
  {
    const auto eq = text.find('=');
    if (eq == std::string::npos)
      throw InputError("--vary", text, "expected \"Section/Name=values\"");
    const std::string path = trim(text.substr(0, eq));
    if (path.empty() || path.find('/') == std::string::npos || path.front() == '/' || path.back() == '/')
      throw InputError("--vary", text, "expected \"Section/Name=values\"");
    SweptEntry e;
    e.path   = path;
    e.values = expand_values(path, text.substr(eq + 1));
    return e;
  }

  SweepPlan
  make_plan(const std::string &case_file, const std::vector<std::string> &sets, const std::vector<std::string> &vary)
  {
    if (vary.empty())
      throw InputError("--vary", "", "a sweep needs at least one --vary \"Section/Name=values\"");
    SweepPlan plan;
    plan.case_file = case_file;
    plan.sets      = sets;
    // The case with the common overrides: checks the file and the --set
    // list once, with their own messages.
    plan.case_text = read_case(case_file, sets).echo;

    std::set<std::string> fixed;
    for (const auto &s : sets)
      fixed.insert(split_override(s).first);
    for (const auto &v : vary)
      {
        SweptEntry e = parse_vary(v);
        const auto doc = documentation_of(e.path);
        if (!doc)
          throw InputError("--vary " + e.path, e.values.front(),
                           "unknown entry (print every entry with 'backcomb template')");
        if (fixed.count(e.path))
          throw InputError("--vary " + e.path, e.values.front(), "is also given with --set");
        for (const auto &other : plan.entries)
          if (other.path == e.path)
            throw InputError("--vary " + e.path, e.values.front(), "is given with --vary more than once");
        // The unit declared with the entry; the documentation's prose for
        // entries not yet declared with one.
        e.unit = entry_unit(e.path);
        if (e.unit.empty())
          e.unit = unit_from_documentation(*doc);
        plan.entries.push_back(std::move(e));
      }

    // Folder names: "Name=value" per entry, joined by "__"; the full path
    // where two entries share a name (e.g. Work function of both contacts).
    std::vector<std::string> names;
    for (const auto &e : plan.entries)
      {
        std::size_t same = 0;
        for (const auto &other : plan.entries)
          same += last_component(other.path) == last_component(e.path);
        names.push_back(sanitised(same > 1 ? e.path : last_component(e.path)));
      }

    std::size_t total = 1;
    for (const auto &e : plan.entries)
      {
        total *= e.values.size();
        if (total > max_cases)
          throw InputError("--vary", e.path, "the grid has more than 100000 cases");
      }

    std::set<std::string> ids;
    for (std::size_t index = 0; index < total; ++index)
      {
        SweepCase   c;
        c.overrides = sets;
        std::size_t rest = index;
        for (std::size_t k = 0; k < plan.entries.size(); ++k)
          {
            const auto &e     = plan.entries[k];
            const auto &value = e.values[rest % e.values.size()];
            rest /= e.values.size();
            c.values.push_back(value);
            c.overrides.push_back(e.path + "=" + value);
            c.id += (k ? "__" : "") + names[k] + "=" + sanitised(value);
          }
        if (c.id.size() > 200 || !ids.insert(c.id).second)
          {
            // Values that differ only in characters a folder name cannot
            // hold: the plan index keeps the names apart.
            c.id = c.id.substr(0, 180) + "__case" + std::to_string(index);
            ids.insert(c.id);
          }
        try
          {
            const Case checked = read_case(case_file, c.overrides);
            if (checked.geometry.layout == geometry::GeometryParameters::Layout::comb_period)
              c.pitch_um = checked.geometry.electron_finger_width_um + checked.geometry.hole_finger_width_um +
                           2 * checked.geometry.gap_um;
          }
        catch (const InputError &e)
          {
            // read_case names swept entries as "--set"; say where they came from.
            std::string message = e.what();
            for (const auto &entry : plan.entries)
              for (std::size_t at = message.find("--set " + entry.path); at != std::string::npos;
                   at = message.find("--set " + entry.path, at + 1))
                message.replace(at, 5, "--vary");
            throw InputError("grid point " + c.id + ": " + message);
          }
        plan.cases.push_back(std::move(c));
      }
    return plan;
  }

  // --------------------------------------------------------------------
  // Running and merging.

  int
  run_sweep(const SweepPlan &plan, const SweepOptions &o)
  {
    int initialised = 0, rank = 0, size = 1;
    MPI_Initialized(&initialised);
    if (initialised)
      {
        MPI_Comm_rank(MPI_COMM_WORLD, &rank);
        MPI_Comm_size(MPI_COMM_WORLD, &size);
      }
    if (o.tasks > 0 && (o.task < 1 || o.task > o.tasks))
      throw InputError("--task", std::to_string(o.task), "must lie in 1.." + std::to_string(o.tasks));

    // A folder that holds another sweep is refused before anything is
    // written: mixing results of two plans would make the table wrong.
    if (fs::exists(plan_file(o.folder)))
      {
        const SweepPlan existing = plan_from_json(read_json(plan_file(o.folder)), plan_file(o.folder));
        const std::string why    = plan_difference(existing, plan);
        if (!why.empty())
          throw InputError("--out", o.folder,
                           "holds a sweep with a different plan (" + why +
                             "); choose another folder, or remove this one to start again");
      }
    make_folder(o.folder + "/cases");
    if (rank == 0)
      write_file_atomically(plan_file(o.folder), plan_to_json(plan).dump(2) + "\n");

    // This process's cases: the task's share, dealt round-robin to ranks.
    std::vector<std::size_t> share;
    for (std::size_t i = 0; i < plan.cases.size(); ++i)
      if (o.tasks == 0 || i % o.tasks == o.task - 1)
        share.push_back(i);
    std::vector<std::size_t> mine;
    for (std::size_t j = 0; j < share.size(); ++j)
      if (j % std::size_t(size) == std::size_t(rank))
        mine.push_back(share[j]);

    auto needs_run = [&](std::size_t i) {
      const SweepCase &c = plan.cases[i];
      if (!is_finished(o.folder, c))
        return true;
      return o.retry_failed && read_case_result(o.folder, c).status == "failed";
    };
    std::size_t to_run = 0, mine_to_run = 0;
    for (const auto i : share)
      to_run += needs_run(i);
    for (const auto i : mine)
      mine_to_run += needs_run(i);
    if (rank == 0 && !o.quiet)
      {
        std::printf("sweep: %zu cases", plan.cases.size());
        for (const auto &e : plan.entries)
          std::printf("%s %s (%zu values)", &e == &plan.entries.front() ? " over" : " x", e.path.c_str(),
                      e.values.size());
        if (o.tasks > 0)
          std::printf("; task %u of %u: %zu cases", o.task, o.tasks, share.size());
        std::printf("; %zu to run on %d process%s; results in %s\n", to_run, size, size > 1 ? "es" : "",
                    o.folder.c_str());
        std::fflush(stdout);
      }

    int                code = exit_ok;
    std::exception_ptr error;
    {
      SweepProgress progress(o.folder, plan, mine_to_run, o.quiet, size, rank);
      try
        {
          for (const auto i : mine)
            {
              if (!needs_run(i))
                {
                  if (read_case_result(o.folder, plan.cases[i]).status == "failed")
                    code = exit_no_convergence;
                  continue;
                }
              progress.starting(plan.cases[i]);
              const SweepRow r = run_case(plan, plan.cases[i], o.folder);
              if (r.status == "failed")
                code = exit_no_convergence;
              progress.finished(r);
            }
        }
      catch (...)
        {
          // Keep going to the collective calls below, so that the other
          // ranks do not wait for this one forever.
          error = std::current_exception();
          code  = exit_io;
        }
    }
    if (initialised && size > 1)
      MPI_Allreduce(MPI_IN_PLACE, &code, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    if (error)
      std::rethrow_exception(error);
    if (code == exit_io)
      return code; // another rank reported its error

    if (o.tasks > 0)
      {
        if (rank == 0 && !o.quiet)
          std::printf("sweep: task %u of %u finished; once every task has finished, build the table "
                      "with: backcomb merge %s\n",
                      o.task, o.tasks, o.folder.c_str());
        return code;
      }

    int merged = exit_ok;
    if (rank == 0)
      {
        try
          {
            merged = merge_sweep(o.folder, o.quiet);
          }
        catch (...)
          {
            error  = std::current_exception();
            merged = exit_io;
          }
      }
    if (initialised && size > 1)
      MPI_Bcast(&merged, 1, MPI_INT, 0, MPI_COMM_WORLD);
    if (error)
      std::rethrow_exception(error);
    return merged;
  }

  std::vector<SweepRow>
  collect_rows(const std::string &folder, SweepPlan &plan)
  {
    plan = plan_from_json(read_json(plan_file(folder)), plan_file(folder));
    std::vector<SweepRow> rows;
    for (const auto &c : plan.cases)
      rows.push_back(read_case_result(folder, c));
    return rows;
  }

  Recommendation
  recommend(const SweepPlan &plan, const std::vector<SweepRow> &rows)
  {
    Recommendation rec;
    // With electrodes specified the whole comb cell's PCE decides (a wider
    // pitch loads each finger with more current); otherwise the period's.
    const bool cell = std::any_of(rows.begin(), rows.end(), [](const SweepRow &r) { return bool(r.PCE_cell); });
    auto       pce  = [cell](const SweepRow &r) { return cell ? r.PCE_cell : r.PCE; };
    for (std::size_t i = 0; i < rows.size(); ++i)
      if (pce(rows[i]) && (!rec.valid || *pce(rows[i]) > *pce(rows[rec.best])))
        rec.best = i, rec.valid = true;
    const SweptEntry &first = plan.entries.front();
    if (!rec.valid || !(*pce(rows[rec.best]) > 0))
      {
        rec.valid = false;
        rec.text  = "No recommendation: no case delivered power (see the status column).";
        return rec;
      }
    const SweepRow &best = rows[rec.best];

    // The line through the best case, and the contiguous run around it
    // within the tolerance; a failed or missing neighbour ends the run,
    // since nothing is known there.
    std::vector<std::size_t> line;
    for (const auto &l : lines_of(plan, rows))
      if (std::find(l.begin(), l.end(), rec.best) != l.end())
        line = l;
    const auto   at    = std::size_t(std::find(line.begin(), line.end(), rec.best) - line.begin());
    const double limit = (1 - near_best_tolerance) * *pce(best);
    auto         near  = [&](std::size_t k) { return pce(rows[line[k]]) && *pce(rows[line[k]]) >= limit; };
    std::size_t  lo = at, hi = at;
    while (lo > 0 && near(lo - 1))
      --lo;
    while (hi + 1 < line.size() && near(hi + 1))
      ++hi;
    rec.near_best.assign(line.begin() + long(lo), line.begin() + long(hi) + 1);
    rec.at_edge = line.size() > 1 && (at == 0 || at + 1 == line.size());

    std::ostringstream text;
    const std::string  others = other_values_text(plan, best);
    text << "Best " << first.path << ": " << with_unit(best.values[0], first.unit);
    if (!others.empty())
      text << " (with " << others << ")";
    text << ", PCE " << format_number(*pce(best), 4) << (cell ? " % of the whole comb cell" : " % per footprint");
    if (best.collection_efficiency)
      text << ", collection efficiency " << format_number(*best.collection_efficiency, 4);
    text << ". ";
    if (rec.near_best.size() > 1)
      text << "Within " << format_number(100 * near_best_tolerance, 3) << " % (relative) of the best PCE: "
           << first.path << " from " << rows[rec.near_best.front()].values[0] << " to "
           << with_unit(rows[rec.near_best.back()].values[0], first.unit) << ".";
    else
      text << "No neighbouring " << first.path << " comes within " << format_number(100 * near_best_tolerance, 3)
           << " % of the best PCE; a finer sweep around it shows how sharp the optimum is.";
    if (rec.at_edge)
      text << " The best value lies at the edge of the swept range: extend the sweep beyond it.";
    std::size_t unfinished = 0;
    for (const auto &r : rows)
      unfinished += r.status == "failed" || r.status == "missing";
    if (unfinished > 0)
      text << " " << unfinished << " of " << rows.size()
           << " cases failed or are missing; the recommendation considers only the others.";
    rec.text = text.str();
    return rec;
  }

  int
  merge_sweep(const std::string &folder, bool quiet)
  {
    if (!fs::exists(plan_file(folder)))
      throw InputError(folder + ": no sweep-plan.json here (is this the --out folder of a sweep?)");
    SweepPlan                   plan;
    const std::vector<SweepRow> rows = collect_rows(folder, plan);
    const Recommendation        rec  = recommend(plan, rows);

    write_csv(folder, plan, rows);

    // The plot: the first entry along x, one line per combination of the others.
    std::vector<std::string> warnings, plots;
    if (all_numeric(plan.entries[0].values))
      {
        SweepPlotData data;
        // The same figure of merit as the recommendation.
        const bool cell = std::any_of(rows.begin(), rows.end(), [](const SweepRow &r) { return bool(r.PCE_cell); });
        if (cell)
          data.pce_label = "PCE of the comb cell (%)";
        std::string   unit = plan.entries[0].unit == "um" ? "µm" : plan.entries[0].unit;
        data.x_label       = plan.entries[0].path + (unit.empty() ? "" : " (" + unit + ")");
        for (const auto &line : lines_of(plan, rows))
          {
            PlotSeries s;
            // Legend text: "Name = value unit" of the other entries.
            for (std::size_t k = 1; k < plan.entries.size(); ++k)
              s.label += (k > 1 ? ", " : "") + last_component(plan.entries[k].path) + " = " +
                         with_unit(rows[line.front()].values[k], plan.entries[k].unit);
            for (const auto i : line)
              {
                s.x.push_back(*to_number(rows[i].values[0]));
                s.pce.push_back((cell ? rows[i].PCE_cell : rows[i].PCE).value_or(nan));
                s.eta.push_back(rows[i].collection_efficiency.value_or(nan));
              }
            data.series.push_back(std::move(s));
          }
        if (rec.valid)
          {
            data.best_x      = to_number(rows[rec.best].values[0]);
            data.best_pce    = cell ? rows[rec.best].PCE_cell : rows[rec.best].PCE;
            data.range_from  = to_number(rows[rec.near_best.front()].values[0]);
            data.range_to    = to_number(rows[rec.near_best.back()].values[0]);
            data.range_label = "within " + format_number(100 * near_best_tolerance, 3) + " % of the highest PCE";
          }
        plots = write_sweep_plots(data, folder + "/sweep", warnings);
      }
    else
      warnings.push_back("no plot: the values of " + plan.entries[0].path + " are not all numbers");
    const std::vector<std::string> collections = write_field_collections(folder, plan, rows);

    std::map<std::string, std::size_t> counts{{"converged", 0}, {"partial", 0}, {"failed", 0}, {"missing", 0}};
    for (const auto &r : rows)
      ++counts[r.status];

    json j;
    j["case_file"] = plan.case_file;
    j["sets"]      = plan.sets;
    j["entries"]   = json::array();
    for (const auto &e : plan.entries)
      j["entries"].push_back({{"path", e.path}, {"unit", e.unit}, {"values", e.values}});
    j["pitch_definition"] = "w_e + w_h + 2 gap: centre to centre of neighbouring fingers of the same polarity";
    j["counts"]           = counts;
    j["cases"]            = json::array();
    for (const auto &r : rows)
      j["cases"].push_back(row_json(plan, r));
    if (rec.valid)
      {
        json best_values = json::object();
        for (std::size_t k = 0; k < plan.entries.size(); ++k)
          best_values[plan.entries[k].path] = rows[rec.best].values[k];
        json near = json::array();
        for (const auto i : rec.near_best)
          near.push_back(rows[i].id);
        j["recommendation"] = {{"text", rec.text},
                               {"best_case", rows[rec.best].id},
                               {"best_values", best_values},
                               {"PCE_percent", json_number(rows[rec.best].PCE)},
                               {"PCE_cell_percent", json_number(rows[rec.best].PCE_cell)},
                               {"collection_efficiency", json_number(rows[rec.best].collection_efficiency)},
                               {"criterion", "highest PCE per footprint"},
                               {"tolerance_relative", near_best_tolerance},
                               {"near_best_cases", near},
                               {"near_best_from", rows[rec.near_best.front()].values[0]},
                               {"near_best_to", rows[rec.near_best.back()].values[0]},
                               {"best_at_edge_of_range", rec.at_edge}};
      }
    else
      j["recommendation"] = {{"text", rec.text}};
    j["files"] = {{"table", "sweep.csv"}, {"plots", json::array()}, {"field_collections", collections}};
    for (const auto &p : plots)
      j["files"]["plots"].push_back(fs::path(p).filename().string());
    j["warnings"] = warnings;
    write_file_atomically(folder + "/sweep.json", j.dump(2) + "\n");

    std::printf("\n");
    print_table(plan, rows);
    std::printf("\n%s\n", rec.text.c_str());
    if (!quiet)
      {
        std::printf("\nPCE is per footprint (the whole period); 'PCE act' per active area; collection "
                    "efficiency = Jsc / (q * integrated generation);\n'dead zone' = absorber area fraction "
                    "with collection probability below the threshold; pitch = w_e + w_h + 2 gap.\n"
                    "recomb., Joule, contacts: power lost at the maximum power point (mW/cm2 of footprint) to "
                    "recombination,\nto the film's resistance and to carriers crossing the combs; electr.: "
                    "fingers and contact resistance of the whole comb cell at its own maximum power point;\n"
                    "PCE cell: that cell's PCE; Rs: series resistance (ohm cm2) from suns-Voc. Each case's "
                    "losses.csv and losses.svg have every term.\n"
                    "Model estimates for comparing designs, only as good as the material parameters.\n");
        std::printf("\nFiles in %s:\n  sweep.csv, sweep.json: the table above (sweep.json with the "
                    "recommendation)\n",
                    folder.c_str());
        for (const auto &p : plots)
          std::printf("  %s: PCE and collection efficiency vs. %s\n", fs::path(p).filename().c_str(),
                      plan.entries[0].path.c_str());
        for (const auto &c : collections)
          std::printf("  %s: ParaView collection of every case's fields at that bias\n", c.c_str());
        std::printf("  cases/<case>/: each case's own results (jv.csv, summary.json, fields) and solve.log\n");
      }
    for (const auto &w : warnings)
      std::fprintf(stderr, "backcomb: %s\n", w.c_str());
    return counts["failed"] + counts["missing"] > 0 ? exit_no_convergence : exit_ok;
  }
} // namespace backcomb::study
