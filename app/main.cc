// backcomb command-line driver: parses the command line, reads the case and
// hands it to the pipeline. Every failure ends with a message and one of the
// exit codes documented in README.md.
#include "geometry/input.h"
#include "postprocess/case_file.h"
#include "postprocess/pipeline.h"

#include <deal.II/base/exceptions.h>
#include <deal.II/base/mpi.h>

#include <cstdio>
#include <cstring>
#include <iostream>
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
    "  mesh CASE.prm [options]  mesh the period: mesh.msh, mesh.vtu and statistics\n"
    "  solve CASE.prm [options] solve the case: jv.csv, summary.json, fields\n"
    "\n"
    "options:\n"
    "  --set \"Section/Name=value\"  override one case-file entry (repeatable)\n"
    "  --out FOLDER                 results folder (default: Output/Folder)\n"
    "  --quiet                      no progress lines\n"
    "\n"
    "exit codes: 0 success, 1 usage, 2 invalid input, 3 no convergence,\n"
    "            4 output could not be written, 5 internal error\n";

  struct Arguments
  {
    std::string              command, case_file, out;
    std::vector<std::string> overrides;
    bool                     quiet = false;
  };

  bool
  parse_arguments(int argc, char **argv, Arguments &a)
  {
    if (argc < 2)
      return false;
    a.command = argv[1];
    for (int i = 2; i < argc; ++i)
      {
        const std::string s = argv[i];
        if (s == "--set" && i + 1 < argc)
          a.overrides.push_back(argv[++i]);
        else if (s == "--out" && i + 1 < argc)
          a.out = argv[++i];
        else if (s == "--quiet")
          a.quiet = true;
        else if (!s.empty() && s[0] != '-' && a.case_file.empty())
          a.case_file = s;
        else
          {
            std::fprintf(stderr, "backcomb: unknown or incomplete argument '%s'\n", s.c_str());
            return false;
          }
      }
    return true;
  }
} // namespace

int
main(int argc, char **argv)
{
  // deal.II and PETSc want MPI; one process is the normal case.
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  dealii::deal_II_exceptions::disable_abort_on_exception();

  Arguments args;
  if (!parse_arguments(argc, argv, args))
    {
      std::fputs(usage, stderr);
      return exit_usage;
    }
  try
    {
      if (args.command == "template")
        {
          std::cout << postprocess::default_case_text();
          return exit_ok;
        }
      if (args.command != "mesh" && args.command != "solve")
        {
          std::fprintf(stderr, "backcomb: unknown command '%s'\n\n%s", args.command.c_str(), usage);
          return exit_usage;
        }
      if (args.case_file.empty())
        {
          std::fprintf(stderr, "backcomb: %s needs a case file\n\n%s", args.command.c_str(), usage);
          return exit_usage;
        }
      const postprocess::Case c = postprocess::read_case(args.case_file, args.overrides);
      const std::string       out = args.out.empty() ? c.output.folder : args.out;
      postprocess::RunOptions options;
      options.folder = out;
      options.quiet  = args.quiet;
      if (args.command == "mesh")
        return postprocess::run_mesh(c, options);
      return postprocess::run_solve(c, options);
    }
  catch (const InputError &e)
    {
      std::fprintf(stderr, "backcomb: input error: %s\n", e.what());
      return exit_input;
    }
  catch (const postprocess::OutputError &e)
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
