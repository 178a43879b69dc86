// The mesh of the simulated cross-section: built with the Gmsh C++ API as a
// structured, graded, all-quadrilateral mesh with physical groups (ids.h),
// written as a .msh file and read into a deal.II triangulation.
//
// Coordinates are in um. Comb period: x from 0 (centre of the electron
// finger) to P = w_e/2 + g + w_h/2 (centre of the hole finger), y from 0
// (substrate) to the film thickness t. Test strip: [0, L] x [0, t] with the
// contacts at its two ends.
#pragma once

#include "geometry/parameters.h"

#include <deal.II/grid/tria.h>

#include <string>
#include <vector>

namespace backcomb::geometry
{
  // The tensor-product node lines of the mesh: every node lies on one x line
  // and one y line. The breakpoints (block corners of the Gmsh model:
  // finger edges, gap centre, interlayer tops) are among the node lines.
  struct MeshLines
  {
    std::vector<double> x_breakpoints, y_breakpoints;
    std::vector<double> x_nodes, y_nodes;
  };

  // The node lines that write_period_msh() uses; exposed for tests and for
  // reporting cell counts without meshing.
  MeshLines
  mesh_lines(const GeometryParameters &geometry, const MeshParameters &mesh);

  // Builds the mesh with Gmsh and writes it (MSH 4.1, ASCII) atomically to
  // `msh_file`. Throws InputError for contradicting parameters and
  // std::runtime_error if Gmsh or the file system fails.
  void
  write_period_msh(const GeometryParameters &geometry,
                   const MeshParameters     &mesh,
                   const std::string        &msh_file);

  // Reads a .msh file into `tria` (cleared first) and checks that every
  // cell has a region id and every boundary face a boundary id from ids.h
  // (InputError naming the file otherwise).
  void
  read_triangulation(const std::string &msh_file, dealii::Triangulation<2> &tria);

  // write_period_msh() + read_triangulation(). With an empty `msh_file` the
  // mesh goes through a temporary file that is removed afterwards.
  void
  build_triangulation(const GeometryParameters &geometry,
                      const MeshParameters     &mesh,
                      dealii::Triangulation<2> &tria,
                      const std::string        &msh_file = "");

  // Cell sizes are the sides of the cells' bounding boxes, in um.
  struct MeshStatistics
  {
    unsigned int n_cells            = 0;
    double       min_size_um        = 0; // smallest side of any cell
    double       max_size_um        = 0; // largest side of any cell
    double       min_x_size_um      = 0;
    double       min_y_size_um      = 0;
    double       max_x_size_um      = 0;
    double       max_y_size_um      = 0;
    double       worst_aspect_ratio = 0; // largest long/short side
  };

  MeshStatistics
  mesh_statistics(const dealii::Triangulation<2> &tria);

  // Writes the mesh for viewing (VTK XML unstructured grid): the cells as
  // quads with the cell field "region_id", and the boundary faces as line
  // cells with the field "boundary_id"; each field is -1 on the other kind
  // of cell. Written atomically; std::runtime_error on failure.
  void
  write_mesh_preview(const dealii::Triangulation<2> &tria,
                     const std::string              &vtu_file);
} // namespace backcomb::geometry
