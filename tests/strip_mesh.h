// A 1D-like test strip built directly with deal.II (independent of the Gmsh
// stage): [0, L] x [0, t] with one cell across, graded toward both ends and
// toward an optional junction at xj. Boundary and region ids as in
// geometry/ids.h: left end electron contact, right end hole contact.
#pragma once

#include "geometry/ids.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"

#include <deal.II/grid/grid_generator.h>
#include <deal.II/grid/tria.h>

#include <algorithm>
#include <cmath>
#include <vector>

namespace backcomb::test_support
{
  // Cell sizes from a (h_min at a, growing by ratio, capped at h_max).
  inline std::vector<double>
  graded_segment(const double length, const double h_min, const double ratio, const double h_max,
                 const bool fine_left, const bool fine_right)
  {
    // Symmetric grading is built as two halves.
    if (fine_left && fine_right)
      {
        auto a = graded_segment(0.5 * length, h_min, ratio, h_max, true, false);
        auto b = graded_segment(0.5 * length, h_min, ratio, h_max, false, true);
        a.insert(a.end(), b.begin(), b.end());
        return a;
      }
    std::vector<double> h;
    double              sum = 0, step = h_min;
    while (sum + step < length)
      {
        h.push_back(step);
        sum += step;
        step = std::min(step * ratio, h_max);
      }
    // Spread the remainder proportionally.
    const double scale = length / sum;
    for (double &x : h)
      x *= scale;
    if (!fine_left)
      std::reverse(h.begin(), h.end());
    return h;
  }

  // Region and boundary ids of a strip [0, L] x [0, t] (see above).
  inline void
  set_strip_ids(dealii::Triangulation<2> &tria, const double L, const double t, const double xj)
  {
    namespace ids = backcomb::geometry::ids;
    for (const auto &cell : tria.active_cell_iterators())
      {
        cell->set_material_id(xj > 0 && cell->center()[0] > xj ? ids::absorber_right : ids::absorber);
        for (const unsigned f : cell->face_indices())
          if (cell->face(f)->at_boundary())
            {
              const auto c = cell->face(f)->center();
              if (std::abs(c[0]) < 1e-12 * L)
                cell->face(f)->set_boundary_id(ids::electron_contact);
              else if (std::abs(c[0] - L) < 1e-12 * L)
                cell->face(f)->set_boundary_id(ids::hole_contact);
              else if (std::abs(c[1]) < 1e-12 * t)
                cell->face(f)->set_boundary_id(ids::gap_interface);
              else
                cell->face(f)->set_boundary_id(ids::top_surface);
            }
      }
  }

  // Uniform nx x ny strip (convergence studies).
  inline void
  make_uniform_strip(dealii::Triangulation<2> &tria, const double L, const double t, const unsigned nx,
                     const unsigned ny)
  {
    dealii::GridGenerator::subdivided_hyper_rectangle(tria, {nx, ny}, dealii::Point<2>(0, 0),
                                                      dealii::Point<2>(L, t));
    set_strip_ids(tria, L, t, 0.0);
  }

  inline void
  make_strip(dealii::Triangulation<2> &tria, const double L, const double t, const double xj,
             const double h_min, const double ratio = 1.15, const double h_max = 1e9)
  {
    std::vector<double> dx;
    if (xj > 0)
      {
        dx        = graded_segment(xj, h_min, ratio, h_max, true, true);
        auto right = graded_segment(L - xj, h_min, ratio, h_max, true, true);
        dx.insert(dx.end(), right.begin(), right.end());
      }
    else
      dx = graded_segment(L, h_min, ratio, h_max, true, true);
    dealii::GridGenerator::subdivided_hyper_rectangle(
      tria, {dx, std::vector<double>{t}}, dealii::Point<2>(0, 0), dealii::Point<2>(L, t));
    set_strip_ids(tria, L, t, xj);
  }

  // A small comb period through the Gmsh stage: fingers 2 um, gap 4 um,
  // film 0.4 um, coarse grading (5 nm cells, ratio 1.4).
  inline void
  make_small_period(dealii::Triangulation<2> &tria, const double largest_lateral_cell_um,
                    const double smallest_cell_nm = 5)
  {
    geometry::GeometryParameters g;
    g.electron_finger_width_um = 2;
    g.hole_finger_width_um     = 2;
    g.gap_um                   = 4;
    g.absorber_thickness_um    = 0.4;
    geometry::MeshParameters mesh;
    mesh.smallest_cell_nm         = smallest_cell_nm;
    mesh.growth_ratio             = 1.4;
    mesh.largest_lateral_cell_um  = largest_lateral_cell_um;
    mesh.largest_vertical_cell_nm = 40;
    geometry::build_triangulation(g, mesh, tria);
  }
} // namespace backcomb::test_support
