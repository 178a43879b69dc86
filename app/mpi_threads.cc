// backcomb asks MPI for MPI_THREAD_MULTIPLE. deal.II's MPI_InitFinalize
// (app/main.cc) initialises MPI with MPI_THREAD_SERIALIZED; the dark J-V,
// though, runs in a thread of its own beside the light J-V (its solver on a
// communicator of its own, simulator/case_run.cc), so both threads may call
// MPI at the same time. This definition takes the place of the library's
// MPI_Init_thread through the MPI profiling interface, which lets a program
// wrap any MPI call and reach the library's own through its PMPI_ name
// (MPI Forum, MPI: A Message-Passing Interface Standard, version 4.0, 2021,
// Sec. 15.2). The executables that contain this file export their symbols
// (CMake ENABLE_EXPORTS), so that the call from the deal.II library finds
// it. A program without it keeps one thread: the solve checks the level
// MPI provided (MPI_Query_thread) before it starts a thread.
#include <mpi.h>

extern "C" int
MPI_Init_thread(int *argc, char ***argv, int required, int *provided)
{
  return PMPI_Init_thread(argc, argv, required > MPI_THREAD_MULTIPLE ? required : MPI_THREAD_MULTIPLE, provided);
}
