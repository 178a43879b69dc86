// backcomb command-line driver: parses the command line, reads the case and
// hands it to the pipeline. Every failure ends with a message and one of the
// exit codes documented in README.md.
#include "base/entries.h"
#include "simulator/case_file.h"
#include "simulator/case_run.h"
#include "simulator/legacy_entries.h"
#include "study/calibration.h"
#include "study/study.h"

#include <deal.II/base/exceptions.h>
#include <deal.II/base/config.h>
#include <deal.II/base/mpi.h>

#include <gmsh.h>
#include <petscversion.h>
#include <vtkVersion.h>

#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <sstream>
#include <string>
#include <vector>

using namespace backcomb;

namespace
{
  const char *usage =
    "usage: backcomb <command> [arguments]\n"
    "\n"
    "commands:\n"
    "  template                 print every case-file entry with its default,\n"
    "                           unit and allowed range\n"
    "  mesh CASE.prm [options]  mesh the period: mesh.msh, mesh.vtu, mesh.png and statistics\n"
    "  solve CASE.prm [options] solve the case: jv.csv, summary.json, fields, pictures\n"
    "  sweep CASE.prm --vary \"Section/Name=VALUES\" [--vary ...] [options]\n"
    "                           solve every case of the grid, then write\n"
    "                           sweep.csv, sweep.json, sweep.svg/.png\n"
    "  upgrade CASE.prm         print the case file with the current section and\n"
    "                           entry names (for a file written for an older\n"
    "                           backcomb); comments and layout are kept\n"
    "  merge FOLDER             table, plot and recommendation from the finished\n"
    "                           cases of a sweep folder (after --task runs)\n"
    "\n"
    "options:\n"
    "  --set \"Section/Name=value\"  override one case-file entry (repeatable)\n"
    "  --out FOLDER                 results folder (default: Output/Folder)\n"
    "  --quiet                      no progress lines\n"
    "  --log FILE                   also write the progress lines to FILE\n"
    "sweep options:\n"
    "  --vary \"Section/Name=VALUES\" swept entry; VALUES is a comma list of values,\n"
    "                               start:stop:step and start:stop:xN (N values,\n"
    "                               constant ratio); a second --vary makes a grid\n"
    "  --in-step \"Section/Name=VALUES\" entry that moves with the --vary before it:\n"
    "                               as many values, the i-th with its i-th (no new cases)\n"
    "  --uncertain \"Section/Name=DIST\" sampled entry: uniform:LOW:HIGH,\n"
    "                               log-uniform:LOW:HIGH or normal:MEAN:SD (repeatable)\n"
    "  --uncertain-from FOLDER      sample the fitted entries of a calibration\n"
    "  --samples N, --sampling sobol|latin, --seed S, --band LOW:HIGH\n"
    "                               samples (16), method, Latin seed, band percentiles (5:95)\n"
    "  --task I --of N              run only share I (1..N) of the cases, no merge\n"
    "  --retry-failed               recompute cases that failed before\n"
    "\n"
    "  backcomb --help, backcomb COMMAND --help   this text, or one command's\n"
    "  backcomb --version                         versions of backcomb and its libraries\n"
    "\n"
    "exit codes: 0 success, 1 usage, 2 invalid input, 3 no convergence,\n"
    "            4 output could not be written, 5 internal error,\n"
    "            6 finished, but a result breaks a physical bound\n";

  // One command's help (`backcomb COMMAND --help`): its synopsis, what it
  // writes and the options it takes.
  struct CommandHelp
  {
    const char *name, *text;
  };
  const CommandHelp command_help[] = {
    {"template",
     "usage: backcomb template [--paths]\n"
     "\n"
     "Prints a case file with every entry at its default, each documented with\n"
     "its unit and allowed range. Save it and edit what you need.\n"
     "\n"
     "  --paths   print only the entry paths (Section/Name), one per line\n"},
    {"mesh",
     "usage: backcomb mesh CASE.prm [--set \"Section/Name=value\"]... [--out FOLDER] [--quiet]\n"
     "\n"
     "Meshes one electrode period and writes FOLDER/mesh.msh, FOLDER/mesh.vtu and\n"
     "FOLDER/mesh.png (the mesh near the electron finger's edge), then prints the\n"
     "cell statistics.\n"
     "\n"
     "  --set \"Section/Name=value\"  override one case-file entry (repeatable)\n"
     "  --out FOLDER                 results folder (default: Output/Folder)\n"
     "  --quiet                      accepted for symmetry with solve\n"},
    {"solve",
     "usage: backcomb solve CASE.prm [--set \"Section/Name=value\"]... [--out FOLDER]\n"
     "                     [--quiet] [--log FILE]\n"
     "\n"
     "Solves one case: equilibrium, light ramp, J-V scan, fields with the\n"
     "collection probability, dead zone, losses. Writes FOLDER/jv.csv,\n"
     "FOLDER/summary.json (last), FOLDER/fields/, FOLDER/jv.png/.svg, FOLDER/collection.png\n"
     "and FOLDER/view_in_paraview.py (open the views: paraview --script=FOLDER/view_in_paraview.py).\n"
     "\n"
     "  --set \"Section/Name=value\"  override one case-file entry (repeatable)\n"
     "  --out FOLDER                 results folder (default: Output/Folder)\n"
     "  --quiet                      no progress lines (the final report stays)\n"
     "  --log FILE                   also write the progress lines, with times, to FILE\n"},
    {"sweep",
     "usage: backcomb sweep CASE.prm --vary \"Section/Name=VALUES\" [--in-step ...] [--vary ...]\n"
     "                     [--set \"Section/Name=value\"]... [--out FOLDER] [--quiet]\n"
     "                     [--uncertain \"Section/Name=DIST\"]... [--uncertain-from FOLDER]\n"
     "                     [--samples N] [--sampling sobol|latin] [--seed S] [--band LOW:HIGH]\n"
     "                     [--task I --of N] [--retry-failed]\n"
     "\n"
     "Solves every case of the grid (one folder per case under FOLDER/cases), then\n"
     "writes FOLDER/sweep.csv, FOLDER/sweep.json, FOLDER/sweep.svg/.png, the ParaView\n"
     "collections and FOLDER/view_in_paraview.py (one time step per swept value).\n"
     "The case file's Fabrication section (gap limits, tolerance, near-best margin,\n"
     "cost per gap) shapes the recommendation.\n"
     "\n"
     "  --vary \"Section/Name=VALUES\" swept entry; VALUES is a comma list of values,\n"
     "                               start:stop:step and start:stop:xN (N values,\n"
     "                               constant ratio); a second --vary makes a grid\n"
     "  --in-step \"Section/Name=VALUES\" entry that moves with the --vary before it:\n"
     "                               as many values, the i-th with its i-th (no new cases)\n"
     "  --set \"Section/Name=value\"  override one case-file entry (repeatable)\n"
     "  --out FOLDER                 results folder (default: Output/Folder)\n"
     "  --quiet                      no progress lines\n"
     "  --uncertain \"Section/Name=DIST\" an uncertain entry, sampled at every grid point:\n"
     "                               DIST is uniform:LOW:HIGH, log-uniform:LOW:HIGH\n"
     "                               (0 < LOW) or normal:MEAN:SD (repeatable)\n"
     "  --uncertain-from FOLDER      the fitted entries of 'backcomb calibrate --out FOLDER'\n"
     "                               (fit.json): correlated normal, in ln for log scaling\n"
     "  --samples N                  samples of the uncertain entries (default 16)\n"
     "  --sampling sobol|latin       Sobol' sequence (default) or Latin hypercube\n"
     "  --seed S                     seed of the Latin hypercube (default 1)\n"
     "  --band LOW:HIGH              percentiles of the bands (default 5:95)\n"
     "                               With samples: FOLDER/sweep-bands.csv (median and band\n"
     "                               per grid point), FOLDER/sensitivity.csv, and the gap\n"
     "                               within the margin in Fabrication/Confidence % of samples.\n"
     "  --task I --of N              run only share I (1..N) of the cases, no merge\n"
     "  --retry-failed               recompute cases that failed before\n"},
    {"upgrade",
     "usage: backcomb upgrade CASE.prm\n"
     "\n"
     "Prints the case file with the current section and entry names (for a file\n"
     "written for an older backcomb); comments and layout are kept.\n"},
    {"calibrate",
     "usage: backcomb calibrate CASE.prm --data FILE [--data FILE]...\n"
     "                     --fit \"Section/Name=LOW:HIGH[:log|:linear]\" [--fit ...]\n"
     "                     [--set \"Section/Name=value\"]... [--loss huber|cauchy[:SCALE]]\n"
     "                     [--iterations N] [--out FOLDER] [--quiet]\n"
     "\n"
     "Fits the chosen entries of the case to measured data of test cells (README,\n"
     "\"Calibration\", describes the data files) by bounded least squares (PETSc TAO).\n"
     "Writes FOLDER/fit.json (values, standard errors, correlations, warnings),\n"
     "FOLDER/fitted.prm (the case with the fitted values), FOLDER/fit-points.csv and\n"
     "one plot per data set. Run again with the same command after a kill: the\n"
     "evaluations in FOLDER/evaluations.jsonl are replayed. Under mpirun the model\n"
     "solves of each iteration are shared by the ranks.\n"
     "\n"
     "  --data FILE                  one measured data set (repeatable)\n"
     "  --fit \"Section/Name=LOW:HIGH\" a fitted entry and its bounds; :log or :linear\n"
     "                               scaling (default log when HIGH >= 10 LOW > 0);\n"
     "                               the fit starts from the case's (or --set) value\n"
     "  --set \"Section/Name=value\"  override one case-file entry for every device\n"
     "  --loss huber|cauchy[:SCALE]  robust loss against outliers, SCALE in standard\n"
     "                               deviations (default 3); default: plain least squares\n"
     "  --iterations N               at most N optimiser iterations (default 30)\n"
     "  --out FOLDER                 results folder (default: backcomb-fit)\n"
     "  --quiet                      no progress lines\n"},
    {"merge",
     "usage: backcomb merge FOLDER [--quiet]\n"
     "\n"
     "Writes the table, plot, recommendation and ParaView files of a sweep folder\n"
     "from its finished cases (after --task runs).\n"},
  };

  const char *
  help_of(const std::string &command)
  {
    for (const auto &h : command_help)
      if (command == h.name)
        return h.text;
    return nullptr;
  }

  struct Arguments
  {
    std::string              command, case_file, out, log;
    std::vector<std::string> overrides, vary;
    std::vector<study::InStepArgument> in_step; // each after the --vary it moves with
    study::UncertaintyArguments        uncertainty; // --uncertain, --samples, ...
    bool                     quiet = false, retry_failed = false, paths = false;
    unsigned                 task = 0, tasks = 0;
    std::vector<std::string> data, fit; // calibrate
    std::string              loss;
    unsigned                 iterations = 0;
  };

  // A whole positive number for --task / --of, or 0.
  unsigned
  positive(const char *text)
  {
    char         *end = nullptr;
    const long    v   = std::strtol(text, &end, 10);
    return (*text && *end == '\0' && v > 0 && v < 1000000) ? unsigned(v) : 0;
  }

  bool
  parse_arguments(int argc, char **argv, Arguments &a)
  {
    a.command = argv[1];
    for (int i = 2; i < argc; ++i)
      {
        const std::string s = argv[i];
        if (s == "--set" && i + 1 < argc)
          a.overrides.push_back(argv[++i]);
        else if (s == "--out" && i + 1 < argc && argv[i + 1][0] != '\0')
          a.out = argv[++i];
        else if (s == "--log" && i + 1 < argc && argv[i + 1][0] != '\0')
          a.log = argv[++i];
        else if (s == "--quiet")
          a.quiet = true;
        else if (s == "--paths" && a.command == "template")
          a.paths = true;
        else if (s == "--vary" && i + 1 < argc)
          a.vary.push_back(argv[++i]);
        else if (s == "--in-step" && i + 1 < argc)
          a.in_step.push_back({a.vary.size(), argv[++i]});
        else if (s == "--retry-failed")
          a.retry_failed = true;
        else if (s == "--uncertain" && i + 1 < argc)
          a.uncertainty.uncertain.push_back(argv[++i]);
        else if ((s == "--uncertain-from" || s == "--samples" || s == "--sampling" || s == "--seed" ||
                  s == "--band") &&
                 i + 1 < argc)
          {
            auto &u = a.uncertainty;
            std::string &slot = s == "--uncertain-from" ? u.from
                                : s == "--samples"      ? u.samples
                                : s == "--sampling"     ? u.sampling
                                : s == "--seed"         ? u.seed
                                                        : u.band;
            if (!slot.empty() || argv[i + 1][0] == '\0')
              {
                std::fprintf(stderr, "backcomb: %s %s\n", s.c_str(),
                             slot.empty() ? "needs a value" : "is given more than once");
                return false;
              }
            slot = argv[++i];
          }
        else if ((s == "--data" || s == "--fit" || s == "--loss") && i + 1 < argc && a.command == "calibrate")
          (s == "--data" ? a.data.push_back(argv[++i]) : s == "--fit" ? a.fit.push_back(argv[++i]) : void(a.loss = argv[++i]));
        else if (s == "--iterations" && i + 1 < argc && a.command == "calibrate")
          {
            a.iterations = positive(argv[++i]);
            if (a.iterations == 0)
              {
                std::fprintf(stderr, "backcomb: --iterations needs a whole number >= 1, not '%s'\n", argv[i]);
                return false;
              }
          }
        else if ((s == "--task" || s == "--of") && i + 1 < argc)
          {
            const unsigned v = positive(argv[++i]);
            if (v == 0)
              {
                std::fprintf(stderr, "backcomb: %s needs a whole number >= 1, not '%s'\n", s.c_str(), argv[i]);
                return false;
              }
            (s == "--task" ? a.task : a.tasks) = v;
          }
        else if (!s.empty() && s[0] != '-' && a.case_file.empty())
          a.case_file = s;
        else
          {
            std::fprintf(stderr, "backcomb: unknown or incomplete argument '%s'\n", s.c_str());
            return false;
          }
      }
    if ((a.task == 0) != (a.tasks == 0) || a.task > a.tasks)
      {
        std::fprintf(stderr, "backcomb: --task I and --of N go together, with 1 <= I <= N\n");
        return false;
      }
    const auto &u = a.uncertainty;
    const bool  sweep_options = !a.vary.empty() || !a.in_step.empty() || a.tasks > 0 || a.retry_failed ||
                               u.given() || !u.samples.empty() || !u.sampling.empty() || !u.seed.empty() ||
                               !u.band.empty();
    if (sweep_options && a.command != "sweep")
      {
        std::fprintf(stderr, "backcomb: --vary, --in-step, --uncertain, --uncertain-from, --samples, --sampling, "
                             "--seed, --band, --task, --of and --retry-failed belong to 'sweep'\n");
        return false;
      }
    if (!a.log.empty() && a.command != "solve")
      {
        std::fprintf(stderr, "backcomb: --log belongs to 'solve' (a sweep writes cases/<case>/solve.log)\n");
        return false;
      }
    return true;
  }

  // `backcomb --version`: this program and the libraries it was built with.
  void
  print_version()
  {
    std::printf("backcomb %s\n", BACKCOMB_VERSION);
    std::printf("deal.II %s\n", DEAL_II_PACKAGE_VERSION);
    std::printf("PETSc %d.%d.%d\n", PETSC_VERSION_MAJOR, PETSC_VERSION_MINOR, PETSC_VERSION_SUBMINOR);
    std::printf("Gmsh %s\n", GMSH_API_VERSION);
    std::printf("VTK %s\n", vtkVersion::GetVTKVersion());
  }

  int
  rank()
  {
    int r = 0;
    MPI_Comm_rank(MPI_COMM_WORLD, &r);
    return r;
  }
} // namespace

int
main(int argc, char **argv)
{
  // The habits every command-line program keeps: help and version on
  // stdout with exit 0; a bare call or an unknown command is a usage error.
  // All answered before MPI starts (which takes a second), as are the
  // entry paths that the shell completion asks for.
  if (argc < 2)
    {
      std::fprintf(stderr, "backcomb: no command given\n\n%s", usage);
      return exit_usage;
    }
  const std::string first = argv[1];
  if (first == "--help" || first == "-h" || first == "help")
    {
      const char *h = argc > 2 ? help_of(argv[2]) : nullptr;
      std::fputs(h ? h : usage, stdout);
      return exit_ok;
    }
  if (first == "--version")
    {
      print_version();
      return exit_ok;
    }
  if (!help_of(first))
    {
      std::fprintf(stderr, "backcomb: unknown command '%s'\n\n%s", first.c_str(), usage);
      return exit_usage;
    }
  for (int i = 2; i < argc; ++i)
    if (std::strcmp(argv[i], "--help") == 0 || std::strcmp(argv[i], "-h") == 0)
      {
        std::fputs(help_of(first), stdout);
        return exit_ok;
      }
  if (first == "template" && argc == 3 && std::strcmp(argv[2], "--paths") == 0)
    {
      for (const auto &p : simulator::entry_paths())
        std::cout << p << '\n';
      return exit_ok;
    }

  // deal.II and PETSc want MPI; one process is the normal case.
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  dealii::deal_II_exceptions::disable_abort_on_exception();

  Arguments args;
  if (!parse_arguments(argc, argv, args))
    {
      std::fprintf(stderr, "\n%s", help_of(first));
      return exit_usage;
    }
  try
    {
      if (args.command == "template")
        {
          if (args.paths)
            for (const auto &p : simulator::entry_paths())
              std::cout << p << '\n';
          else
            std::cout << simulator::default_case_text();
          return exit_ok;
        }
      if (args.command == "upgrade")
        {
          if (args.case_file.empty() || !args.overrides.empty() || !args.out.empty())
            {
              std::fprintf(stderr, "backcomb: upgrade takes only the case file\n\n%s", usage);
              return exit_usage;
            }
          std::error_code ec;
          std::ifstream   in(args.case_file);
          if (!std::filesystem::is_regular_file(args.case_file, ec) || !in)
            throw InputError(args.case_file + ": not a readable case file (missing, or not a regular file)");
          std::ostringstream text;
          text << in.rdbuf();
          const std::string upgraded = simulator::upgrade_case_text(text.str());
          // Print only a file that reads: one that fails for another reason
          // is reported as it would be by 'solve'.
          try
            {
              std::istringstream check(upgraded);
              simulator::read_case(check, args.case_file, {});
            }
          catch (const InputError &e)
            {
              throw InputError(std::string(e.what()) +
                               " (in the case file as upgraded to the current names; nothing printed)");
            }
          std::cout << upgraded;
          return exit_ok;
        }
      if (args.command == "merge")
        {
          if (args.case_file.empty() || !args.overrides.empty() || !args.out.empty())
            {
              std::fprintf(stderr, "backcomb: merge takes only the sweep folder (and --quiet)\n\n%s", usage);
              return exit_usage;
            }
          return rank() == 0 ? study::merge_study(args.case_file, args.quiet) : exit_ok;
        }
      if (args.case_file.empty())
        {
          std::fprintf(stderr, "backcomb: %s needs a case file\n\n%s", args.command.c_str(), usage);
          return exit_usage;
        }
      if (args.command == "calibrate")
        {
          study::CalibrationOptions options;
          options.case_file  = args.case_file;
          options.sets       = args.overrides;
          options.data_files = args.data;
          options.fit        = args.fit;
          if (!args.loss.empty())
            study::parse_loss(args.loss, options);
          if (args.iterations > 0)
            options.max_iterations = args.iterations;
          if (!args.out.empty())
            options.folder = args.out;
          options.quiet = args.quiet;
          return study::run_calibration(options, MPI_COMM_WORLD);
        }
      if (args.command == "sweep")
        {
          // Every rank checks the whole grid: the same input gives every
          // rank the same error, so all stop alike before anything is written.
          const study::StudyPlan plan =
            study::make_plan(args.case_file, args.overrides, args.vary, args.in_step, args.uncertainty);
          study::StudyOptions options;
          options.folder = args.out.empty()
                             ? simulator::read_case(args.case_file, args.overrides).output.folder
                             : args.out;
          options.quiet        = args.quiet;
          options.task         = args.task;
          options.tasks        = args.tasks;
          options.retry_failed = args.retry_failed;
          return study::run_study(plan, options);
        }
      const simulator::Case c = simulator::read_case(args.case_file, args.overrides);
      const std::string       out = args.out.empty() ? c.output.folder : args.out;
      simulator::RunOptions options;
      options.folder = out;
      options.quiet  = args.quiet;
      options.log    = args.log;
      if (args.command == "mesh")
        return simulator::run_mesh(c, options);
      return simulator::run_solve(c, options);
    }
  catch (const InputError &e)
    {
      // Input errors are the same on every rank: report them once.
      if (rank() == 0)
        std::fprintf(stderr, "backcomb: input error: %s\n", e.what());
      return exit_input;
    }
  catch (const OutputError &e)
    {
      std::fprintf(stderr, "backcomb: output error: %s\n", e.what());
      return exit_io;
    }
  catch (const std::exception &e)
    {
      std::fprintf(stderr, "backcomb: internal error: %s\n", e.what());
      return exit_internal;
    }
}
