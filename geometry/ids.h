// Every region and boundary id of the backcomb meshes, in one place.
//
// The numbers are the Gmsh physical-group tags written by period_mesh.cc.
// deal.II's Gmsh reader turns a surface group's tag into the cell's
// material_id and a curve group's tag into the face's boundary_id, so the
// same numbers identify regions and boundaries in the finite-element stage,
// in the output fields and in messages.
#pragma once

#include <deal.II/base/types.h>

#include <string>

namespace backcomb::geometry::ids
{
  // Regions (material_id of the cells).
  constexpr dealii::types::material_id absorber            = 1;
  constexpr dealii::types::material_id electron_interlayer = 2;
  constexpr dealii::types::material_id hole_interlayer     = 3;
  // The right part of a test strip with a junction (p-n junction tests).
  constexpr dealii::types::material_id absorber_right = 4;

  // Boundaries (boundary_id of the faces).
  constexpr dealii::types::boundary_id electron_contact = 1;
  constexpr dealii::types::boundary_id hole_contact     = 2;
  constexpr dealii::types::boundary_id gap_interface    = 3;
  constexpr dealii::types::boundary_id top_surface      = 4;
  constexpr dealii::types::boundary_id left_symmetry    = 5;
  constexpr dealii::types::boundary_id right_symmetry   = 6;

  constexpr unsigned int n_regions    = 4;
  constexpr unsigned int n_boundaries = 6;

  // The name of a region id (also the Gmsh physical-group name), or an
  // empty string for a number that is not a region id.
  inline std::string
  region_name(const dealii::types::material_id id)
  {
    static const char *const names[n_regions] = {"absorber",
                                                 "electron_interlayer",
                                                 "hole_interlayer",
                                                 "absorber_right"};
    return (id >= 1 && id <= n_regions) ? names[id - 1] : "";
  }

  // The name of a boundary id (also the Gmsh physical-group name), or an
  // empty string for a number that is not a boundary id.
  inline std::string
  boundary_name(const dealii::types::boundary_id id)
  {
    static const char *const names[n_boundaries] = {"electron_contact",
                                                    "hole_contact",
                                                    "gap_interface",
                                                    "top_surface",
                                                    "left_symmetry",
                                                    "right_symmetry"};
    return (id >= 1 && id <= n_boundaries) ? names[id - 1] : "";
  }
} // namespace backcomb::geometry::ids
