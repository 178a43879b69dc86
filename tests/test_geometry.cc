// Tests of the geometry stage: 1D grading, parameters, the Gmsh-built
// meshes of the comb period and the test strip, and the mesh preview file.
#include "geometry/grading.h"
#include "geometry/ids.h"
#include "base/entries.h"
#include "geometry/parameters.h"
#include "geometry/period_mesh.h"

#include <deal.II/base/parameter_handler.h>
#include <deal.II/grid/tria.h>

#include <gmsh.h>
#include <gtest/gtest.h>
#include <unistd.h>
#include <vtkCellData.h>
#include <vtkCellType.h>
#include <vtkSmartPointer.h>
#include <vtkUnstructuredGrid.h>
#include <vtkXMLUnstructuredGridReader.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <iostream>
#include <map>
#include <string>
#include <vector>

using namespace backcomb;
using namespace backcomb::geometry;

namespace
{
  std::filesystem::path
  scratch_dir()
  {
    return std::filesystem::temp_directory_path() /
           ("backcomb-test-geometry-" + std::to_string(getpid()));
  }

  std::string
  scratch_file(const std::string &name)
  {
    std::filesystem::create_directories(scratch_dir());
    return (scratch_dir() / name).string();
  }

  // Removes the scratch files when the test program ends.
  class ScratchCleanup : public ::testing::Environment
  {
  public:
    void
    TearDown() override
    {
      std::error_code ignored;
      std::filesystem::remove_all(scratch_dir(), ignored);
    }
  };
  const auto *const cleanup =
    ::testing::AddGlobalTestEnvironment(new ScratchCleanup);

  void
  expect_relative(const double value, const double reference, const double tol)
  {
    EXPECT_NEAR(value, reference, tol * std::abs(reference))
      << "value " << value << " reference " << reference;
  }

  GeometryParameters
  comb(const double w_e,
       const double w_h,
       const double gap,
       const double t,
       const double t_e_nm = 0,
       const double t_h_nm = 0)
  {
    GeometryParameters g;
    g.electron_finger_width_um = w_e;
    g.hole_finger_width_um     = w_h;
    g.gap_um                   = gap;
    g.absorber_thickness_um    = t;
    g.electron_interlayer_nm   = t_e_nm;
    g.hole_interlayer_nm       = t_h_nm;
    return g;
  }

  GeometryParameters
  strip(const double length, const double junction, const double t)
  {
    GeometryParameters g;
    g.layout               = GeometryParameters::Layout::test_strip;
    g.strip_length_um      = length;
    g.junction_position_um = junction;
    g.absorber_thickness_um = t;
    return g;
  }

  // The geometries every mesh test runs on.
  std::vector<std::pair<std::string, GeometryParameters>>
  geometries()
  {
    return {{"default", GeometryParameters()},
            {"gap 200 um over 0.2 um film", comb(10, 10, 200, 0.2)},
            {"asymmetric fingers", comb(4, 16, 30, 0.5)},
            {"interlayers", comb(10, 10, 20, 0.4, 30, 50)},
            {"equal interlayers, asymmetric", comb(6, 12, 15, 0.3, 20, 20)},
            {"electron interlayer only", comb(8, 8, 12, 0.4, 40, 0)},
            {"strip with junction", strip(10, 4, 0.4)},
            {"strip without junction", strip(6, 0, 0.3)}};
  }

  bool
  is_strip(const GeometryParameters &g)
  {
    return g.layout == GeometryParameters::Layout::test_strip;
  }

  // Analytic areas (um^2) per region id and lengths (um) per boundary id:
  // the rectangles described in period_mesh.h.
  std::map<int, double>
  analytic_areas(const GeometryParameters &g)
  {
    const double t = g.absorber_thickness_um;
    if (is_strip(g))
      {
        const double xj = g.junction_position_um, L = g.strip_length_um;
        if (xj > 0)
          return {{ids::absorber, xj * t}, {ids::absorber_right, (L - xj) * t}};
        return {{ids::absorber, L * t}};
      }
    std::map<int, double> a;
    const double e = g.electron_finger_width_um / 2 *
                     g.electron_interlayer_nm / 1000;
    const double h = g.hole_finger_width_um / 2 * g.hole_interlayer_nm / 1000;
    a[ids::absorber] = g.width_um() * t - e - h;
    if (e > 0)
      a[ids::electron_interlayer] = e;
    if (h > 0)
      a[ids::hole_interlayer] = h;
    return a;
  }

  std::map<int, double>
  analytic_lengths(const GeometryParameters &g)
  {
    const double t = g.absorber_thickness_um;
    if (is_strip(g))
      return {{ids::electron_contact, t},
              {ids::hole_contact, t},
              {ids::gap_interface, g.strip_length_um},
              {ids::top_surface, g.strip_length_um}};
    return {{ids::electron_contact, g.electron_finger_width_um / 2},
            {ids::hole_contact, g.hole_finger_width_um / 2},
            {ids::gap_interface, g.gap_um},
            {ids::top_surface, g.width_um()},
            {ids::left_symmetry, t},
            {ids::right_symmetry, t}};
  }

  double
  x_size(const dealii::Triangulation<2>::active_cell_iterator &cell)
  {
    return cell->bounding_box().side_length(0);
  }
  double
  y_size(const dealii::Triangulation<2>::active_cell_iterator &cell)
  {
    return cell->bounding_box().side_length(1);
  }
} // namespace

// ---------------------------------------------------------------- grading

TEST(Grading, GeometricThenUniformCells)
{
  // Analytic: sizes 0.01 * 1.25^j stay <= 0.1 for j <= 10 (1.25^10 = 9.31),
  // so 11 geometric cells cover 0.01 (1.25^11 - 1) / 0.25 = 0.4257; the rest
  // 0.5743 needs 6 cells of at most 0.1, so N = 17 and the 6 equal cells are
  // (1 - 0.4257...) / 6.
  const auto cells = graded_cells(1.0, 0.01, 1.25, 0.1);
  ASSERT_EQ(cells.size(), 17u);
  const double geometric = 0.01 * (std::pow(1.25, 11) - 1) / 0.25;
  for (unsigned int j = 0; j < 11; ++j)
    expect_relative(cells[j], 0.01 * std::pow(1.25, j), 1e-13);
  for (unsigned int j = 11; j < 17; ++j)
    expect_relative(cells[j], (1 - geometric) / 6, 1e-13);
  double sum = 0;
  for (const double c : cells)
    sum += c;
  expect_relative(sum, 1.0, 1e-14);
}

TEST(Grading, ShortIntervalHasEqualCells)
{
  // Analytic: 0.01 + 0.0125 >= 0.015 gives N = 2, and two cells of the
  // requested 0.01 overshoot, so both become 0.015 / 2.
  const auto cells = graded_cells(0.015, 0.01, 1.25, 0.1);
  ASSERT_EQ(cells.size(), 2u);
  EXPECT_DOUBLE_EQ(cells[0], 0.0075);
  EXPECT_DOUBLE_EQ(cells[1], 0.0075);
}

TEST(Grading, NodesMeetEveryConstraint)
{
  const GradingRule rule{0.01, 1.25, 0.1};
  // Comb-like axis (mirror lines at 0, 1.5, 3) and an axis whose first
  // interval is too short for the requested smallest cell.
  const std::vector<std::vector<double>> axes = {{0, 1, 1.5, 2, 3},
                                                 {0, 0.015, 1}};
  const std::vector<std::vector<bool>> refined = {
    {false, true, false, true, false}, {true, true, false}};
  // Analytic: the short interval is refined at both ends, so its halves of
  // 0.0075 are single cells and every refined point starts at 0.0075.
  const std::vector<double> expected_first = {0.01, 0.0075};
  for (unsigned int a = 0; a < axes.size(); ++a)
    {
      const auto nodes = graded_nodes(axes[a], refined[a], rule);
      for (const double b : axes[a])
        EXPECT_TRUE(std::find(nodes.begin(), nodes.end(), b) != nodes.end());
      for (std::size_t k = 0; k + 1 < nodes.size(); ++k)
        {
          const double h = nodes[k + 1] - nodes[k];
          EXPECT_GT(h, 0);
          EXPECT_LE(h, rule.largest * (1 + 1e-12));
          if (k + 2 < nodes.size())
            {
              const double next = nodes[k + 2] - nodes[k + 1];
              EXPECT_LE(std::max(h / next, next / h), rule.ratio + 1e-9)
                << "axis " << a << " node " << k;
            }
        }
      // Cells on both sides of every refined point have the first size.
      for (std::size_t i = 0; i < axes[a].size(); ++i)
        if (refined[a][i])
          {
            const auto k = std::find(nodes.begin(), nodes.end(), axes[a][i]) -
                           nodes.begin();
            if (k > 0)
              expect_relative(nodes[k] - nodes[k - 1], expected_first[a], 1e-9);
            if (k + 1 < static_cast<long>(nodes.size()))
              expect_relative(nodes[k + 1] - nodes[k], expected_first[a], 1e-9);
          }
    }
}

// ------------------------------------------------------------- parameters

TEST(Parameters, DefaultsAndContradictions)
{
  dealii::ParameterHandler prm;
  GeometryParameters::declare_parameters(prm);
  MeshParameters::declare_parameters(prm);
  GeometryParameters g;
  MeshParameters     m;
  g.parse_parameters(prm);
  m.parse_parameters(prm);
  EXPECT_EQ(g.layout, GeometryParameters::Layout::comb_period);
  EXPECT_DOUBLE_EQ(g.width_um(), 5 + 20 + 5); // analytic: w_e/2 + g + w_h/2
  EXPECT_DOUBLE_EQ(m.growth_ratio, 1.25);

  prm.enter_subsection("Geometry");
  prm.set("Hole interlayer thickness", "400");
  prm.leave_subsection();
  try
    {
      g.parse_parameters(prm);
      FAIL() << "an interlayer as thick as the absorber was accepted";
    }
  catch (const InputError &e)
    {
      EXPECT_EQ(e.entry(), "Geometry/Hole interlayer thickness");
      EXPECT_EQ(e.value(), "400");
      EXPECT_NE(e.reason().find("Absorber thickness = 0.4"), std::string::npos);
    }

  prm.enter_subsection("Mesh");
  prm.set("Largest vertical cell", "1");
  prm.leave_subsection();
  EXPECT_THROW(m.parse_parameters(prm), InputError);
  prm.enter_subsection("Mesh");
  prm.set("Largest vertical cell", "20");
  prm.set("Growth ratio", "1");
  prm.leave_subsection();
  EXPECT_THROW(m.parse_parameters(prm), InputError);

  MeshParameters coarse;
  coarse.smallest_cell_nm = 500;
  EXPECT_THROW(coarse.validate(GeometryParameters()), InputError);
}

// ------------------------------------------------------------------ meshes

TEST(Mesh, AreasAndBoundaryLengthsMatchTheGeometry)
{
  for (const auto &[name, g] : geometries())
    {
      SCOPED_TRACE(name);
      dealii::Triangulation<2> tria;
      build_triangulation(g, MeshParameters(), tria);

      std::map<int, double> areas, lengths;
      for (const auto &cell : tria.active_cell_iterators())
        {
          areas[cell->material_id()] += cell->measure();
          for (const auto &face : cell->face_iterators())
            if (face->at_boundary())
              lengths[face->boundary_id()] += face->measure();
        }
      const auto expected_areas   = analytic_areas(g);
      const auto expected_lengths = analytic_lengths(g);
      ASSERT_EQ(areas.size(), expected_areas.size());
      ASSERT_EQ(lengths.size(), expected_lengths.size());
      for (const auto &[id, area] : expected_areas)
        expect_relative(areas[id], area, 1e-10);
      for (const auto &[id, length] : expected_lengths)
        expect_relative(lengths[id], length, 1e-10);
    }
}

TEST(Mesh, PhysicalGroupsCarryTheDocumentedIdsAndNames)
{
  for (const auto &[name, g] : geometries())
    {
      SCOPED_TRACE(name);
      const std::string file = scratch_file("groups.msh");
      write_period_msh(g, MeshParameters(), file);

      gmsh::initialize(0, nullptr, false);
      gmsh::option::setNumber("General.Terminal", 0);
      gmsh::open(file);
      gmsh::vectorpair groups;
      gmsh::model::getPhysicalGroups(groups);
      std::map<int, std::string> regions, boundaries;
      for (const auto &[dim, tag] : groups)
        {
          std::string group_name;
          gmsh::model::getPhysicalName(dim, tag, group_name);
          (dim == 2 ? regions : boundaries)[tag] = group_name;
        }
      gmsh::finalize();

      const auto expected_regions    = analytic_areas(g);
      const auto expected_boundaries = analytic_lengths(g);
      ASSERT_EQ(regions.size(), expected_regions.size());
      ASSERT_EQ(boundaries.size(), expected_boundaries.size());
      for (const auto &[id, area] : expected_regions)
        EXPECT_EQ(regions[id], ids::region_name(id));
      for (const auto &[id, length] : expected_boundaries)
        EXPECT_EQ(boundaries[id], ids::boundary_name(id));
    }
  EXPECT_EQ(ids::region_name(ids::hole_interlayer), "hole_interlayer");
  EXPECT_EQ(ids::boundary_name(ids::right_symmetry), "right_symmetry");
}

TEST(Mesh, GradingMeetsTheRequestedSizes)
{
  MeshParameters finer;
  finer.smallest_cell_nm = 1;
  finer.growth_ratio     = 1.15;
  std::vector<MeshParameters> meshes = {MeshParameters(), finer};

  for (const auto &[name, g] : geometries())
    for (const auto &m : meshes)
      {
        SCOPED_TRACE(name + ", smallest cell " +
                     std::to_string(m.smallest_cell_nm) + " nm");
        dealii::Triangulation<2> tria;
        build_triangulation(g, m, tria);

        // Refined lines: finger edges (or strip ends and junction) in x,
        // the bottom and the interlayer tops in y.
        std::vector<double> x_refined, y_refined = {0.};
        if (is_strip(g))
          {
            x_refined = {0., g.strip_length_um};
            if (g.junction_position_um > 0)
              x_refined.push_back(g.junction_position_um);
          }
        else
          {
            const double a = g.electron_finger_width_um / 2;
            x_refined      = {a, a + g.gap_um};
            for (const double nm : {g.electron_interlayer_nm, g.hole_interlayer_nm})
              if (nm > 0)
                y_refined.push_back(nm / 1000);
          }

        const double h    = m.smallest_cell_nm / 1000;
        const double slack = 1 + 1e-9;
        unsigned int n_edge_cells = 0, n_bottom_cells = 0;
        for (const auto &cell : tria.active_cell_iterators())
          {
            const double dx = x_size(cell), dy = y_size(cell);
            EXPECT_LE(dx, m.largest_lateral_cell_um * slack);
            EXPECT_LE(dy, m.largest_vertical_cell_nm / 1000 * slack);
            const auto box = cell->bounding_box();
            for (const double x : x_refined)
              if (std::abs(box.lower_bound(0) - x) < 1e-12 ||
                  std::abs(box.upper_bound(0) - x) < 1e-12)
                {
                  EXPECT_LE(dx, h * slack);
                  ++n_edge_cells;
                }
            for (const double y : y_refined)
              if (std::abs(box.lower_bound(1) - y) < 1e-12 ||
                  std::abs(box.upper_bound(1) - y) < 1e-12)
                {
                  EXPECT_LE(dy, h * slack);
                  ++n_bottom_cells;
                }

            // Neighbour ratios: x sizes across faces normal to x, y sizes
            // across faces normal to y.
            for (const unsigned int f : cell->face_indices())
              if (!cell->at_boundary(f))
                {
                  const auto   other  = cell->neighbor(f);
                  const auto   normal = cell->face(f)->center() - cell->center();
                  const bool   across_x = std::abs(normal[0]) > std::abs(normal[1]);
                  const double mine   = across_x ? dx : dy;
                  const double theirs = across_x ? x_size(other) : y_size(other);
                  EXPECT_LE(std::max(mine / theirs, theirs / mine),
                            m.growth_ratio + 1e-9)
                    << "cell at " << cell->center();
                }
          }
        EXPECT_GT(n_edge_cells, 0u);
        EXPECT_GT(n_bottom_cells, 0u);
      }
}

TEST(Mesh, DefaultMeshOfAWideGapStaysSmall)
{
  GeometryParameters g;
  g.gap_um = 200;
  dealii::Triangulation<2> tria;
  build_triangulation(g, MeshParameters(), tria);
  const MeshStatistics s = mesh_statistics(tria);
  const MeshLines      lines = mesh_lines(g, MeshParameters());
  std::cout << "default mesh, 200 um gap over 0.4 um film: " << s.n_cells
            << " cells (" << lines.x_nodes.size() - 1 << " x "
            << lines.y_nodes.size() - 1 << "), x sizes " << s.min_x_size_um
            << " .. " << s.max_x_size_um << " um, y sizes " << s.min_y_size_um
            << " .. " << s.max_y_size_um << " um, worst aspect ratio "
            << s.worst_aspect_ratio << std::endl;
  EXPECT_LT(s.n_cells, 20000u);
  // The tensor-product mesh has one cell per pair of node-line intervals.
  EXPECT_EQ(s.n_cells, (lines.x_nodes.size() - 1) * (lines.y_nodes.size() - 1));
  // Analytic: a cell at a finger edge on the contact is the requested
  // 2 nm x 2 nm, so the smallest size is 0.002 um.
  expect_relative(s.min_x_size_um, 0.002, 1e-9);
  expect_relative(s.min_y_size_um, 0.002, 1e-9);
}

TEST(Mesh, PreviewFileHoldsCellsAndFields)
{
  const GeometryParameters g = comb(10, 10, 20, 0.4, 30, 50);
  dealii::Triangulation<2> tria;
  build_triangulation(g, MeshParameters(), tria, scratch_file("preview.msh"));
  unsigned int n_boundary_faces = 0;
  for (const auto &cell : tria.active_cell_iterators())
    for (const auto &face : cell->face_iterators())
      n_boundary_faces += face->at_boundary();

  const std::string file = scratch_file("preview.vtu");
  write_mesh_preview(tria, file);
  auto reader = vtkSmartPointer<vtkXMLUnstructuredGridReader>::New();
  reader->SetFileName(file.c_str());
  reader->Update();
  vtkUnstructuredGrid *grid = reader->GetOutput();
  ASSERT_NE(grid, nullptr);
  unsigned int n_quads = 0, n_lines = 0;
  for (vtkIdType c = 0; c < grid->GetNumberOfCells(); ++c)
    {
      n_quads += grid->GetCellType(c) == VTK_QUAD;
      n_lines += grid->GetCellType(c) == VTK_LINE;
    }
  EXPECT_EQ(n_quads, tria.n_active_cells());
  EXPECT_EQ(n_lines, n_boundary_faces);
  EXPECT_NE(grid->GetCellData()->GetArray("region_id"), nullptr);
  EXPECT_NE(grid->GetCellData()->GetArray("boundary_id"), nullptr);
}

TEST(Mesh, FileErrorsAreReported)
{
  dealii::Triangulation<2> tria;
  EXPECT_THROW(read_triangulation(scratch_file("does-not-exist.msh"), tria),
               InputError);
  EXPECT_THROW(write_period_msh(GeometryParameters(),
                                MeshParameters(),
                                scratch_file("no-such-folder/period.msh")),
               std::runtime_error);
  // Gmsh is usable again after the failure.
  build_triangulation(GeometryParameters(), MeshParameters(), tria);
  EXPECT_GT(tria.n_active_cells(), 0u);
  // No temporary files are left behind.
  for (const auto &entry : std::filesystem::directory_iterator(scratch_dir()))
    EXPECT_NE(entry.path().filename().string()[0], '.') << entry.path();
}
