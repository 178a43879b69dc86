// Dead zones from the VTK pipeline against an independent quadrature of
// the nodal collection probability, and the field file read back with
// VTK's XML reader.
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "geometry/ids.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"
#include "postprocess/dead_zone.h"

#include <gtest/gtest.h>
#include <vtkDataArray.h>
#include <vtkNew.h>
#include <vtkPointData.h>
#include <vtkUnstructuredGrid.h>
#include <vtkXMLUnstructuredGridReader.h>

#include <cmath>
#include <filesystem>

using namespace backcomb;
using namespace backcomb::fem;
namespace ids = backcomb::geometry::ids;

TEST(DeadZone, VtkAreaMatchesDirectQuadrature)
{
  // A period with a 10 um gap and a short diffusion length, so that the
  // middle of the gap is dead; fine lateral cells (0.1 um).
  geometry::GeometryParameters g;
  g.electron_finger_width_um = 2;
  g.hole_finger_width_um     = 2;
  g.gap_um                   = 10;
  g.absorber_thickness_um    = 0.3;
  geometry::MeshParameters mesh;
  mesh.smallest_cell_nm         = 5;
  mesh.growth_ratio             = 1.3;
  mesh.largest_lateral_cell_um  = 0.1;
  mesh.largest_vertical_cell_nm = 30;
  dealii::Triangulation<2> tria;
  geometry::build_triangulation(g, mesh, tria);

  Material m;
  m.tau_n = m.tau_p = 1e-7;
  ContactParameters e, h;
  e.work_function = 4.0, e.S_n = 1e7, e.S_p = 10;
  h.work_function = 5.4, h.S_n = 10, h.S_p = 1e7;
  auto G = [](double, double y) { return 1e21 * std::exp(-(0.3 - y) / 0.1); };
  DeviceModel dev(300, {{ids::absorber, m}}, {ids::absorber}, e, h, SurfaceParameters(),
                  SurfaceParameters(), G);
  NumericsParameters num;
  DriftDiffusionSolver solver(tria, dev, num);
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const dealii::Vector<double> fc = solver.collection_probability();

  const auto dir = std::filesystem::temp_directory_path() / ("backcomb-dz-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::string vtu = (dir / "f.vtu").string();
  // Threshold half-way between the smallest and largest f_c, so that the
  // dead zone is a proper part of the film whatever the lifetime.
  double fmin = 1e9, fmax = -1e9;
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    {
      std::vector<dealii::types::global_dof_index> i12(12);
      cell->get_dof_indices(i12);
      for (unsigned v = 0; v < 4; ++v)
        {
          const double f = fc[i12[solver.dof_handler().get_fe().component_to_system_index(0, v)]];
          fmin = std::min(fmin, f), fmax = std::max(fmax, f);
        }
    }
  const double t = 0.5 * (fmin + fmax);
  solver.write_fields(vtu, &fc, t);
  const postprocess::DeadZone d = postprocess::analyse_dead_zone(vtu, t, (dir / "c.vtp").string());
  ASSERT_TRUE(d.present);
  EXPECT_TRUE(std::filesystem::exists(dir / "c.vtp"));

  // Independent: midpoint rule on 40 x 40 sub-cells of every cell with the
  // bilinear interpolation of the nodal values (the cells are rectangles).
  double area = 0, dead = 0, gen = 0, dead_gen = 0;
  std::vector<dealii::types::global_dof_index> idx(12);
  const auto &fe = solver.dof_handler().get_fe();
  for (const auto &cell : solver.dof_handler().active_cell_iterators())
    {
      cell->get_dof_indices(idx);
      double f[4];
      for (unsigned v = 0; v < 4; ++v)
        f[v] = fc[idx[fe.component_to_system_index(0, v)]];
      const dealii::Point<2> p0 = cell->vertex(0), p3 = cell->vertex(3);
      const double hx = p3[0] - p0[0], hy = p3[1] - p0[1];
      const int    n  = 40;
      for (int i = 0; i < n; ++i)
        for (int j = 0; j < n; ++j)
          {
            const double s = (i + 0.5) / n, r = (j + 0.5) / n;
            // deal.II vertex order: 0 (0,0), 1 (1,0), 2 (0,1), 3 (1,1).
            const double val = f[0] * (1 - s) * (1 - r) + f[1] * s * (1 - r) + f[2] * (1 - s) * r + f[3] * s * r;
            const double dA  = hx * hy / (n * n);
            const double Gv  = G(p0[0] + s * hx, p0[1] + r * hy);
            area += dA;
            gen += Gv * dA;
            if (val < t)
              dead += dA, dead_gen += Gv * dA;
          }
    }
  std::printf("dead-zone area fraction: VTK %.5f, quadrature %.5f; generated fraction VTK %.5f, "
              "quadrature %.5f; band x = %.3f .. %.3f um\n",
              d.area_fraction, dead / area, d.generated_fraction, dead_gen / gen, d.x_min_um, d.x_max_um);
  EXPECT_NEAR(d.absorber_area_um2 / area, 1.0, 1e-6); // VTK stores points in single precision
  EXPECT_GT(d.area_fraction, 0.05);
  EXPECT_LT(d.area_fraction, 0.95);
  EXPECT_NEAR(d.area_fraction / (dead / area), 1.0, 0.01);
  EXPECT_NEAR(d.generated_fraction / (dead_gen / gen), 1.0, 0.01);

  // The field file read back: fields present, 0 <= f_c <= 1 (small
  // tolerance), n, p > 0.
  vtkNew<vtkXMLUnstructuredGridReader> reader;
  reader->SetFileName(vtu.c_str());
  reader->Update();
  vtkPointData *pd = reader->GetOutput()->GetPointData();
  for (const char *name :
       {"electrostatic_potential_V", "electron_quasi_fermi_level_eV", "hole_quasi_fermi_level_eV",
        "quasi_fermi_level_splitting_eV", "electron_density_per_cm3", "hole_density_per_cm3",
        "electron_current_density_mA_per_cm2", "hole_current_density_mA_per_cm2", "current_density_mA_per_cm2",
        "electric_field_strength_V_per_cm", "generation_rate_per_cm3_s", "recombination_rate_per_cm3_s",
        "R_srh_per_cm3_s", "R_radiative_per_cm3_s", "R_auger_per_cm3_s", "collection_probability",
        "collection_probability_electron_equation_part", "collection_probability_hole_equation_part",
        "dead_zone_mask", "in_absorber", "region_id"})
    ASSERT_NE(pd->GetArray(name), nullptr) << name;
  // Every field name says what it is: no placeholder components.
  for (int i = 0; i < pd->GetNumberOfArrays(); ++i)
    EXPECT_EQ(std::string(pd->GetArrayName(i)).find("unused"), std::string::npos) << pd->GetArrayName(i);
  double range[2];
  pd->GetArray("collection_probability")->GetRange(range);
  EXPECT_GT(range[0], -1e-3);
  EXPECT_LT(range[1], 1 + 1e-3);
  pd->GetArray("electron_density_per_cm3")->GetRange(range);
  EXPECT_GT(range[0], 0);
  pd->GetArray("hole_density_per_cm3")->GetRange(range);
  EXPECT_GT(range[0], 0);
  std::filesystem::remove_all(dir);
}

TEST(DeadZone, MaskCoversOnlyTheAbsorber)
{
  // A period with an electron interlayer over the electron finger. With a
  // threshold above every f_c the whole absorber is "dead", so the mask
  // must equal the absorber flag: 1 in the absorber, 0 in the interlayer.
  geometry::GeometryParameters g;
  g.electron_finger_width_um = 2;
  g.hole_finger_width_um     = 2;
  g.gap_um                   = 4;
  g.absorber_thickness_um    = 0.3;
  g.electron_interlayer_nm   = 50;
  geometry::MeshParameters mesh;
  mesh.smallest_cell_nm         = 10;
  mesh.growth_ratio             = 1.5;
  mesh.largest_lateral_cell_um  = 0.5;
  mesh.largest_vertical_cell_nm = 50;
  dealii::Triangulation<2> tria;
  geometry::build_triangulation(g, mesh, tria);

  Material m;
  m.tau_n = m.tau_p = 1e-7;
  ContactParameters e, h;
  e.work_function = 4.0, e.S_n = 1e7, e.S_p = 10;
  h.work_function = 5.4, h.S_n = 10, h.S_p = 1e7;
  auto G = [](double, double) { return 1e21; };
  DeviceModel dev(300, {{ids::absorber, m}, {ids::electron_interlayer, m}}, {ids::absorber}, e, h,
                  SurfaceParameters(), SurfaceParameters(), G);
  NumericsParameters num;
  DriftDiffusionSolver solver(tria, dev, num);
  ASSERT_TRUE(illuminate(solver, 1.0, 8).converged);
  const dealii::Vector<double> fc = solver.collection_probability();

  const auto dir = std::filesystem::temp_directory_path() / ("backcomb-mask-" + std::to_string(::getpid()));
  std::filesystem::create_directories(dir);
  const std::string vtu = (dir / "f.vtu").string();
  solver.write_fields(vtu, &fc, 2.0);
  vtkNew<vtkXMLUnstructuredGridReader> reader;
  reader->SetFileName(vtu.c_str());
  reader->Update();
  vtkPointData *pd       = reader->GetOutput()->GetPointData();
  vtkDataArray *mask     = pd->GetArray("dead_zone_mask");
  vtkDataArray *absorber = pd->GetArray("in_absorber");
  ASSERT_NE(mask, nullptr);
  ASSERT_NE(absorber, nullptr);
  vtkIdType outside = 0;
  for (vtkIdType i = 0; i < mask->GetNumberOfTuples(); ++i)
    {
      EXPECT_EQ(mask->GetTuple1(i), absorber->GetTuple1(i)) << "point " << i;
      outside += absorber->GetTuple1(i) == 0;
    }
  EXPECT_GT(outside, 0); // the interlayer is in the file
  std::filesystem::remove_all(dir);
}
