#include "study/farm.h"

#include "base/errors.h"
#include "base/files.h"
#include "base/json_file.h"
#include "simulator/case_file.h"
#include "simulator/case_run.h"
#include "study/layout.h"
#include "study/merge.h"
#include "study/progress.h"
#include "study/rows.h"

#include <mpi.h>
#include <nlohmann/json.hpp>

#include <cerrno>
#include <chrono>
#include <cmath>
#include <cstring>
#include <cstdio>
#include <fcntl.h>
#include <filesystem>
#include <iostream>
#include <memory>
#include <unistd.h>

namespace backcomb::study
{
  using json = nlohmann::json;
  namespace fs = std::filesystem;

  namespace
  {
    // Sends this process's standard output and error to a file while it
    // lives: the solve's own messages go to the case's solve.log, and the
    // study's log keeps one line per case.
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
      OutputToFile(const OutputToFile &)            = delete;
      OutputToFile &operator=(const OutputToFile &) = delete;

    private:
      int saved_out = -1, saved_err = -1;
    };

    // Leftovers of an interrupted run go, except the J-V checkpoint, from
    // which the solve continues where it stopped (it carries its own
    // fingerprint and is discarded if it belongs to other input).
    void
    clear_case_folder(const std::string &dir)
    {
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
    }

    // Solves one case with its output in `dir`/solve.log. Returns why it
    // could not run ("" when run_solve returned), and its exit code.
    std::string
    solve_case(const StudyPlan &plan, const StudyCase &c, const std::string &dir, int &code)
    {
      OutputToFile log(dir + "/solve.log");
      std::string  reason;
      try
        {
          const simulator::Case case_data = simulator::read_case(plan.case_file, c.overrides);
          simulator::RunOptions options;
          options.folder       = dir;
          options.quiet        = false;
          options.communicator = MPI_COMM_SELF;
          code                 = simulator::run_solve(case_data, options);
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
      return reason;
    }

    // Runs the full pipeline for one case in a clean folder. Whatever goes
    // wrong ends as a failed case: summary.json with status "failed" when
    // the solve got that far, failed.json with the reason otherwise.
    StudyRow
    run_case(const StudyPlan &plan, const StudyCase &c, const std::string &folder)
    {
      const std::string dir = case_folder(folder, c.id);
      clear_case_folder(dir);
      const auto  t0      = std::chrono::steady_clock::now();
      int         code    = exit_internal;
      std::string reason  = solve_case(plan, c, dir, code);
      const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      if (!fs::exists(dir + "/summary.json"))
        {
          if (reason.empty())
            reason = "the solve ended with exit code " + std::to_string(code) + " without a summary";
          const json failed = {{"status", to_string(Status::failed)},
                               {"reason", first_line(reason, 2000)},
                               {"exit_code", code},
                               {"seconds", seconds},
                               {"log", "solve.log"}};
          write_json_atomically(dir + "/failed.json", failed);
        }
      StudyRow r = read_row(folder, c);
      r.seconds  = seconds;
      return r;
    }

    // A folder that holds another study is refused before anything is
    // written: mixing results of two plans would make the table wrong.
    void
    check_folder_and_write_plan(const StudyPlan &plan, const std::string &folder, const int rank)
    {
      if (fs::exists(plan_file(folder)))
        {
          const std::string why = plan_difference(read_plan(folder), plan);
          if (!why.empty())
            throw InputError("--out", folder,
                             "holds a sweep with a different plan (" + why +
                               "); choose another folder, or remove this one to start again");
        }
      make_folder(folder + "/cases");
      if (rank == 0)
        write_json_atomically(plan_file(folder), plan_to_json(plan));
    }

    // The cases of this task's share (every task-th case of the plan),
    // most expensive first: the widest electrode pitch has the most mesh
    // columns and the slowest lateral transport (the test strip, without a
    // pitch, counts as the cheapest). Ranks take the next unclaimed case
    // when they are free, so that the long cases start first and a rank
    // never idles while cases are left.
    std::vector<std::size_t>
    share_by_cost(const StudyPlan &plan, const StudyOptions &o)
    {
      std::vector<std::size_t> share;
      for (std::size_t i = 0; i < plan.cases.size(); ++i)
        if (o.tasks == 0 || i % o.tasks == o.task - 1)
          share.push_back(i);
      auto cost = [&plan](std::size_t i) {
        const double p = plan.cases[i].pitch_um;
        return std::isfinite(p) ? p : 0.0;
      };
      std::stable_sort(share.begin(), share.end(), [&](std::size_t a, std::size_t b) { return cost(a) > cost(b); });
      return share;
    }

    // Claims of the cases of one run of the study: a case belongs to the
    // rank that creates its claim file first (O_EXCL, atomic on local and
    // network file systems). The folder is the run's own (named by rank
    // 0's host, process and start time), so claims of an interrupted run
    // never block a rerun; rank 0 removes it when the run ends.
    class CaseClaims
    {
    public:
      CaseClaims(const std::string &folder, const StudyOptions &o, const int rank, const bool parallel)
      {
        char token[160] = "";
        if (rank == 0)
          {
            char host[64] = "";
            ::gethostname(host, sizeof host - 1);
            std::snprintf(token, sizeof token, "%s-%ld-%lld-task%u", host, long(::getpid()),
                          (long long)std::chrono::system_clock::now().time_since_epoch().count(), o.task);
          }
        if (parallel)
          MPI_Bcast(token, sizeof token, MPI_CHAR, 0, MPI_COMM_WORLD);
        dir = folder + "/claims/" + token;
        int made = 1;
        if (rank == 0)
          {
            std::error_code ec;
            fs::create_directories(dir, ec);
            made = ec ? 0 : 1;
          }
        if (parallel)
          MPI_Bcast(&made, 1, MPI_INT, 0, MPI_COMM_WORLD);
        if (!made)
          throw OutputError("cannot create the folder " + dir + " for the claims of the cases");
        owner = rank == 0;
      }
      ~CaseClaims()
      {
        if (!owner)
          return;
        std::error_code ec;
        fs::remove_all(dir, ec);
        fs::remove(fs::path(dir).parent_path(), ec); // only if empty
      }
      CaseClaims(const CaseClaims &)            = delete;
      CaseClaims &operator=(const CaseClaims &) = delete;

      bool
      take(const std::string &id) const
      {
        const int fd = ::open((dir + "/" + id).c_str(), O_WRONLY | O_CREAT | O_EXCL, 0644);
        if (fd < 0)
          {
            if (errno == EEXIST)
              return false;
            throw OutputError("cannot create the claim file " + dir + "/" + id + ": " + std::strerror(errno));
          }
        ::close(fd);
        return true;
      }

    private:
      std::string dir;
      bool        owner = false;
    };

    void
    print_start(const StudyPlan &plan, const StudyOptions &o, const std::size_t share_size,
                const std::size_t to_run, const int size)
    {
      std::printf("sweep: %zu cases", plan.cases.size());
      for (const auto &e : plan.entries)
        if (e.is_axis())
          std::printf("%s %s (%zu values)", &e == &plan.entries.front() ? " over" : " x", e.path.c_str(),
                      e.values.size());
        else
          std::printf(" with %s in step", e.path.c_str());
      if (plan.samples.active())
        std::printf(" x %zu samples of %zu uncertain entr%s", plan.samples.count, plan.samples.entries.size(),
                    plan.samples.entries.size() > 1 ? "ies" : "y");
      if (o.tasks > 0)
        std::printf("; task %u of %u: %zu cases", o.task, o.tasks, share_size);
      std::printf("; %zu to run on %d process%s; results in %s\n", to_run, size, size > 1 ? "es" : "",
                  o.folder.c_str());
      std::fflush(stdout);
    }

    // Whether a case is to be computed in this run: it has no result yet, its
    // summary.json belongs to another case, or it failed and --retry-failed
    // asks again. `row` gets what the folder holds (empty if nothing).
    bool
    needs_run(const StudyOptions &o, const StudyCase &c, StudyRow &row)
    {
      if (!is_finished(o.folder, c.id))
        return true;
      row = read_row(o.folder, c);
      return row.foreign || (o.retry_failed && row.status == Status::failed);
    }

    // Runs the cases of the share that need it and that this rank claims
    // first; the exit code so far.
    int
    run_cases(const StudyPlan &plan, const StudyOptions &o, const std::vector<std::size_t> &share,
              const CaseClaims &claims, StudyProgress &progress)
    {
      int code = exit_ok;
      for (const auto i : share)
        {
          const StudyCase &c = plan.cases[i];
          StudyRow         before;
          if (!needs_run(o, c, before))
            {
              if (before.status == Status::failed)
                code = exit_no_convergence;
              continue;
            }
          if (!claims.take(c.id))
            continue;
          if (before.foreign && !o.quiet)
            std::printf("sweep: case %s: %s: computing it again\n", c.id.c_str(),
                        first_line(before.reason, 300).c_str());
          progress.starting(c);
          const StudyRow r = run_case(plan, c, o.folder);
          if (r.status == Status::failed)
            code = exit_no_convergence;
          progress.finished(r);
        }
      return code;
    }

    // Rank 0 merges; every rank returns its result.
    int
    merge_on_rank_zero(const StudyOptions &o, const int rank, const bool parallel)
    {
      int                merged = exit_ok;
      std::exception_ptr error;
      if (rank == 0)
        {
          try
            {
              merged = merge_study(o.folder, o.quiet);
            }
          catch (...)
            {
              error  = std::current_exception();
              merged = exit_io;
            }
        }
      if (parallel)
        MPI_Bcast(&merged, 1, MPI_INT, 0, MPI_COMM_WORLD);
      if (error)
        std::rethrow_exception(error);
      return merged;
    }
  } // namespace

  int
  run_study(const StudyPlan &plan, const StudyOptions &o)
  {
    int initialised = 0, rank = 0, size = 1;
    MPI_Initialized(&initialised);
    if (initialised)
      {
        MPI_Comm_rank(MPI_COMM_WORLD, &rank);
        MPI_Comm_size(MPI_COMM_WORLD, &size);
      }
    const bool parallel = initialised && size > 1;
    if (o.tasks > 0 && (o.task < 1 || o.task > o.tasks))
      throw InputError("--task", std::to_string(o.task), "must lie in 1.." + std::to_string(o.tasks));
    check_folder_and_write_plan(plan, o.folder, rank);

    const std::vector<std::size_t> share = share_by_cost(plan, o);
    std::size_t to_run = 0;
    for (const auto i : share)
      {
        StudyRow row;
        to_run += needs_run(o, plan.cases[i], row);
      }
    // This rank's expected part, for its estimate of the time left.
    const std::size_t mine_to_run = (to_run + std::size_t(size) - 1) / std::size_t(size);
    if (rank == 0 && !o.quiet)
      print_start(plan, o, share.size(), to_run, size);

    int                code = exit_ok;
    std::exception_ptr error;
    // Removed by rank 0 after every rank has passed the reduction below.
    auto claims = std::make_unique<CaseClaims>(o.folder, o, rank, parallel);
    {
      StudyProgress progress(o.folder, plan, mine_to_run, o.quiet, size, rank);
      try
        {
          code = run_cases(plan, o, share, *claims, progress);
        }
      catch (...)
        {
          // Keep going to the collective calls below, so that the other
          // ranks do not wait for this one forever.
          error = std::current_exception();
          code  = exit_io;
        }
    }
    if (parallel)
      MPI_Allreduce(MPI_IN_PLACE, &code, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
    claims.reset();
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
    return merge_on_rank_zero(o, rank, parallel);
  }
} // namespace backcomb::study
