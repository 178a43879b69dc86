#include "study/progress.h"

#include "base/format.h"
#include "study/layout.h"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <sstream>
#include <unistd.h>

namespace backcomb::study
{
  namespace
  {
    std::size_t
    count_finished(const std::string &folder, const StudyPlan &plan)
    {
      std::size_t n = 0;
      for (const auto &c : plan.cases)
        n += is_finished(folder, c.id);
      return n;
    }
  } // namespace

  std::string
  duration_text(const double seconds)
  {
    const long s = std::lround(std::max(0.0, seconds));
    char       buffer[32];
    if (s >= 3600)
      std::snprintf(buffer, sizeof buffer, "%ldh%02ldm", s / 3600, (s / 60) % 60);
    else
      std::snprintf(buffer, sizeof buffer, "%ldm%02lds", s / 60, s % 60);
    return buffer;
  }

  StudyProgress::StudyProgress(const std::string &folder, const StudyPlan &plan, const std::size_t to_run,
                               const bool quiet, const int n_processes, const int rank)
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

  StudyProgress::~StudyProgress()
  {
    if (!terminal)
      return;
    {
      std::lock_guard<std::mutex> lock(mutex);
      stop = true;
    }
    wake.notify_all();
    ticker.join();
    blank_terminal_line();
    ::close(terminal_fd);
  }

  void
  StudyProgress::starting(const StudyCase &c)
  {
    std::lock_guard<std::mutex> lock(mutex);
    running       = c.id;
    running_since = std::chrono::steady_clock::now();
  }

  void
  StudyProgress::finished(const StudyRow &r)
  {
    std::lock_guard<std::mutex> lock(mutex);
    done = count_finished(folder, plan);
    ++computed;
    running = "";
    if (quiet)
      return;
    std::ostringstream line;
    line << "sweep: " << rank_tag << "[" << done << "/" << plan.cases.size() << "] " << r.id << " "
         << to_string(r.status);
    if (r.seconds)
      line << " in " << format_number(*r.seconds, 3) << " s";
    if (r.PCE)
      line << ": PCE " << format_number(*r.PCE, 4) << " %";
    if (r.collection_efficiency)
      line << ", collection efficiency " << format_number(*r.collection_efficiency, 4);
    if (r.status == Status::failed)
      line << ": " << first_line(r.reason, 160);
    line << "; " << estimate();
    if (terminal)
      blank_terminal_line();
    std::printf("%s\n", line.str().c_str());
    std::fflush(stdout);
  }

  double
  StudyProgress::elapsed() const
  {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  }

  std::string
  StudyProgress::estimate() const
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
  StudyProgress::blank_terminal_line()
  {
    const std::string blank = "\r" + std::string(100, ' ') + "\r";
    (void)!::write(terminal_fd, blank.data(), blank.size());
  }

  void
  StudyProgress::tick()
  {
    std::unique_lock<std::mutex> lock(mutex);
    while (!stop)
      {
        std::string line = "\rsweep: " + std::to_string(done) + "/" + std::to_string(plan.cases.size()) +
                           " cases done, " + estimate();
        if (!running.empty())
          {
            const double running_for =
              std::chrono::duration<double>(std::chrono::steady_clock::now() - running_since).count();
            line += "; running " + running + " (" + duration_text(running_for) + ")";
          }
        if (line.size() > 100)
          line = line.substr(0, 100);
        line += std::string(101 - line.size(), ' ');
        (void)!::write(terminal_fd, line.data(), line.size());
        wake.wait_for(lock, std::chrono::seconds(1));
      }
  }
} // namespace backcomb::study
