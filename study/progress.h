// Progress of this process's share of a study, on the terminal or in a
// batch log.
#pragma once

#include "study/columns.h"
#include "study/plan.h"

#include <chrono>
#include <condition_variable>
#include <mutex>
#include <string>
#include <thread>

namespace backcomb::study
{
  // "2m10s", or "1h05m" from an hour on.
  std::string duration_text(double seconds);

  // On a terminal (one process, not quiet) a line that is redrawn every
  // second; otherwise one line per finished case, for batch logs. The count
  // of finished cases is of the whole plan, read from the case folders, so
  // it includes the cases of other ranks and tasks; the estimate of the
  // time left is this process's: its mean time per case times its cases
  // still to run.
  class StudyProgress
  {
  public:
    StudyProgress(const std::string &folder, const StudyPlan &plan, std::size_t to_run, bool quiet,
                  int n_processes, int rank);
    ~StudyProgress();
    StudyProgress(const StudyProgress &)            = delete;
    StudyProgress &operator=(const StudyProgress &) = delete;

    void starting(const StudyCase &c);
    void finished(const StudyRow &r);

  private:
    double      elapsed() const;
    std::string estimate() const; // "elapsed 2m10s, about 3m00s left"
    void        tick();           // the terminal line, redrawn until stopped
    void        blank_terminal_line();

    const std::string                           folder;
    const StudyPlan                            &plan;
    const bool                                  quiet;
    const std::string                           rank_tag;
    const bool                                  terminal;
    const std::chrono::steady_clock::time_point start;
    const std::size_t                           to_run; // by this process in this run
    std::size_t                                 done;   // finished cases of the whole plan
    std::size_t                                 computed = 0;
    std::string                                 running;
    std::chrono::steady_clock::time_point       running_since;
    int                                         terminal_fd = -1;
    std::mutex                                  mutex;
    std::condition_variable                     wake;
    bool                                        stop = false;
    std::thread                                 ticker;
  };
} // namespace backcomb::study
