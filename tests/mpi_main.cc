// GoogleTest entry point that initialises MPI and PETSc (through deal.II)
// for the whole test program, as the backcomb executable does.
#include <deal.II/base/mpi.h>

#include <gtest/gtest.h>

int
main(int argc, char **argv)
{
  dealii::Utilities::MPI::MPI_InitFinalize mpi(argc, argv, 1);
  ::testing::InitGoogleTest(&argc, argv);
  return RUN_ALL_TESTS();
}
