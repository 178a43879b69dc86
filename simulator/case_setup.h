// The pieces every run of a case builds the same way: the period mesh
// shared by the processes, the materials by region, the finger layout of
// the optics and the device model. Used by `solve` (case_run.cc) and by
// the model predictions of a calibration (device_response.cc).
#pragma once

#include "simulator/case_file.h"

#include <deal.II/grid/tria.h>

#include <mpi.h>

#include <map>
#include <memory>
#include <string>

namespace backcomb::simulator
{
  // Rank 0 writes the mesh file `msh`, then every process reads it. An
  // error on rank 0 is passed on to all processes so that none waits
  // forever (InputError for an invalid geometry, OutputError otherwise).
  void build_shared_mesh(const Case &c, const std::string &msh, dealii::Triangulation<2> &tria, MPI_Comm comm);

  // The material of every region of the mesh.
  std::map<unsigned, fem::Material> materials_of(const Case &c);

  // Where the fingers and their interlayers sit, for the optical columns.
  fem::FingerLayout finger_layout(const Case &c);

  // The device in scaled units with the generation of `g` (which must
  // outlive the device).
  std::unique_ptr<fem::DeviceModel> make_device(const Case &c, const fem::Generation &g);
} // namespace backcomb::simulator
