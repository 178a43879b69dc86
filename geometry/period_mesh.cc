#include "geometry/period_mesh.h"

#include "geometry/grading.h"
#include "geometry/ids.h"
#include "base/entries.h"

#include <deal.II/grid/grid_in.h>

#include <gmsh.h>
#include <unistd.h>
#include <vtkCellData.h>
#include <vtkCellType.h>
#include <vtkIntArray.h>
#include <vtkPoints.h>
#include <vtkSmartPointer.h>
#include <vtkUnstructuredGrid.h>
#include <vtkXMLUnstructuredGridWriter.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <filesystem>
#include <limits>
#include <map>
#include <sstream>
#include <stdexcept>

namespace backcomb::geometry
{
  namespace
  {
    // Gmsh 4.8 cannot be asked whether its API is initialized, and
    // deal.II's GridIn::read_msh(filename) initializes and finalizes it by
    // itself. This counter lets nested users in this file share one
    // session; read_triangulation() runs only outside of it, so deal.II's
    // session and ours never overlap. (Gmsh is not thread-safe; neither is
    // this.)
    class GmshSession
    {
    public:
      GmshSession()
      {
        if (depth == 0)
          {
            // No configuration files: the mesh must not depend on the
            // user's Gmsh settings.
            gmsh::initialize(0, nullptr, false);
            gmsh::option::setNumber("General.Terminal", 0);
          }
        ++depth;
      }
      ~GmshSession()
      {
        if (--depth == 0)
          gmsh::finalize();
      }
      GmshSession(const GmshSession &) = delete;
      GmshSession &
      operator=(const GmshSession &) = delete;

    private:
      static inline int depth = 0;
    };

    // A name next to `file` for writing before the atomic rename. The
    // extension is kept because Gmsh picks the format from it.
    std::filesystem::path
    temporary_sibling(const std::string &file)
    {
      static std::atomic<unsigned int> counter{0};
      const std::filesystem::path      p(file);
      return p.parent_path() /
             ("." + p.stem().string() + ".tmp" + std::to_string(getpid()) +
              "-" + std::to_string(counter++) + p.extension().string());
    }

    void
    rename_or_throw(const std::filesystem::path &from, const std::string &to)
    {
      std::error_code error;
      std::filesystem::rename(from, to, error);
      if (error)
        {
          std::filesystem::remove(from, error);
          throw std::runtime_error("cannot write " + to + ": " +
                                   error.message());
        }
    }

    // Index of each breakpoint in the node list (the breakpoints are copied
    // into the node list exactly, so the search is exact).
    std::vector<std::size_t>
    breakpoint_indices(const std::vector<double> &breakpoints,
                       const std::vector<double> &nodes)
    {
      std::vector<std::size_t> indices;
      for (const double b : breakpoints)
        {
          const auto it = std::lower_bound(nodes.begin(), nodes.end(), b);
          if (it == nodes.end() || *it != b)
            throw std::logic_error("breakpoint missing from the node lines");
          indices.push_back(it - nodes.begin());
        }
      return indices;
    }

    // Gmsh places the nodes of a transfinite block with uniform curves on a
    // regular grid. This maps such a uniform coordinate to the graded node
    // line with the same index inside its block.
    double
    graded_coordinate(const double                     uniform,
                      const std::vector<double>       &breakpoints,
                      const std::vector<std::size_t>  &indices,
                      const std::vector<double>       &nodes)
    {
      const std::size_t n_blocks = breakpoints.size() - 1;
      std::size_t       i =
        std::upper_bound(breakpoints.begin(), breakpoints.end(), uniform) -
        breakpoints.begin();
      i = std::min(std::max<std::size_t>(i, 1), n_blocks) - 1;
      const double n_cells = indices[i + 1] - indices[i];
      const double position =
        (uniform - breakpoints[i]) / (breakpoints[i + 1] - breakpoints[i]) *
        n_cells;
      const double j = std::round(position);
      if (std::abs(position - j) > 1e-6 || j < 0 || j > n_cells)
        throw std::logic_error("Gmsh node off the uniform block grid");
      return nodes[indices[i] + static_cast<std::size_t>(j)];
    }

    // Which physical group each block and each outer block side belongs to.
    struct BlockIds
    {
      std::vector<std::vector<int>> region; // [column][row]
      std::vector<int>              bottom, top; // per column
      std::vector<int>              left, right; // per row
    };

    BlockIds
    block_ids(const GeometryParameters &geometry, const MeshLines &lines)
    {
      const std::size_t nx = lines.x_breakpoints.size() - 1;
      const std::size_t ny = lines.y_breakpoints.size() - 1;
      BlockIds          b;
      b.region.assign(nx, std::vector<int>(ny, ids::absorber));
      b.top.assign(nx, ids::top_surface);
      if (geometry.layout == GeometryParameters::Layout::test_strip)
        {
          // Columns: [0, xj] and [xj, L] with a junction, else [0, L].
          if (geometry.junction_position_um > 0)
            for (std::size_t j = 0; j < ny; ++j)
              b.region[1][j] = ids::absorber_right;
          b.bottom.assign(nx, ids::gap_interface);
          b.left.assign(ny, ids::electron_contact);
          b.right.assign(ny, ids::hole_contact);
          return b;
        }

      // Columns: electron finger half, two gap halves, hole finger half.
      const double t_e = geometry.electron_interlayer_nm / 1000;
      const double t_h = geometry.hole_interlayer_nm / 1000;
      for (std::size_t j = 0; j < ny; ++j)
        {
          const double row_top = lines.y_breakpoints[j + 1];
          if (row_top <= t_e)
            b.region[0][j] = ids::electron_interlayer;
          if (row_top <= t_h)
            b.region[3][j] = ids::hole_interlayer;
        }
      b.bottom = {ids::electron_contact,
                  ids::gap_interface,
                  ids::gap_interface,
                  ids::hole_contact};
      b.left.assign(ny, ids::left_symmetry);
      b.right.assign(ny, ids::right_symmetry);
      return b;
    }

    // Adds the blocks, transfinite constraints and physical groups to the
    // current Gmsh model and meshes it with the graded node lines.
    void
    mesh_blocks(const MeshLines &lines, const BlockIds &block)
    {
      const auto       &xb = lines.x_breakpoints;
      const auto       &yb = lines.y_breakpoints;
      const std::size_t nx = xb.size() - 1, ny = yb.size() - 1;
      const auto        x_index = breakpoint_indices(xb, lines.x_nodes);
      const auto        y_index = breakpoint_indices(yb, lines.y_nodes);

      namespace geo = gmsh::model::geo;
      std::vector<std::vector<int>> point(nx + 1, std::vector<int>(ny + 1));
      for (std::size_t i = 0; i <= nx; ++i)
        for (std::size_t j = 0; j <= ny; ++j)
          point[i][j] = geo::addPoint(xb[i], yb[j], 0);
      // horizontal[i][j]: from point (i, j) to (i+1, j);
      // vertical[i][j]: from point (i, j) to (i, j+1).
      std::vector<std::vector<int>> horizontal(nx, std::vector<int>(ny + 1));
      std::vector<std::vector<int>> vertical(nx + 1, std::vector<int>(ny));
      for (std::size_t i = 0; i < nx; ++i)
        for (std::size_t j = 0; j <= ny; ++j)
          horizontal[i][j] = geo::addLine(point[i][j], point[i + 1][j]);
      for (std::size_t i = 0; i <= nx; ++i)
        for (std::size_t j = 0; j < ny; ++j)
          vertical[i][j] = geo::addLine(point[i][j], point[i][j + 1]);
      std::vector<std::vector<int>> surface(nx, std::vector<int>(ny));
      for (std::size_t i = 0; i < nx; ++i)
        for (std::size_t j = 0; j < ny; ++j)
          {
            const int loop = geo::addCurveLoop({horizontal[i][j],
                                                vertical[i + 1][j],
                                                -horizontal[i][j + 1],
                                                -vertical[i][j]});
            surface[i][j]  = geo::addPlaneSurface({loop});
          }
      geo::synchronize();

      // Uniform transfinite curves give every block a regular grid with the
      // right number of cells; the graded positions are set afterwards.
      namespace mesh = gmsh::model::mesh;
      for (std::size_t i = 0; i < nx; ++i)
        for (std::size_t j = 0; j <= ny; ++j)
          mesh::setTransfiniteCurve(horizontal[i][j],
                                    x_index[i + 1] - x_index[i] + 1);
      for (std::size_t i = 0; i <= nx; ++i)
        for (std::size_t j = 0; j < ny; ++j)
          mesh::setTransfiniteCurve(vertical[i][j],
                                    y_index[j + 1] - y_index[j] + 1);
      for (std::size_t i = 0; i < nx; ++i)
        for (std::size_t j = 0; j < ny; ++j)
          {
            mesh::setTransfiniteSurface(surface[i][j],
                                        "Left",
                                        {point[i][j],
                                         point[i + 1][j],
                                         point[i + 1][j + 1],
                                         point[i][j + 1]});
            mesh::setRecombine(2, surface[i][j]);
          }

      std::map<int, std::vector<int>> regions, boundaries;
      for (std::size_t i = 0; i < nx; ++i)
        for (std::size_t j = 0; j < ny; ++j)
          regions[block.region[i][j]].push_back(surface[i][j]);
      for (std::size_t i = 0; i < nx; ++i)
        {
          boundaries[block.bottom[i]].push_back(horizontal[i][0]);
          boundaries[block.top[i]].push_back(horizontal[i][ny]);
        }
      for (std::size_t j = 0; j < ny; ++j)
        {
          boundaries[block.left[j]].push_back(vertical[0][j]);
          boundaries[block.right[j]].push_back(vertical[nx][j]);
        }
      for (const auto &[id, tags] : regions)
        {
          gmsh::model::addPhysicalGroup(2, tags, id);
          gmsh::model::setPhysicalName(2, id, ids::region_name(id));
        }
      for (const auto &[id, tags] : boundaries)
        {
          gmsh::model::addPhysicalGroup(1, tags, id);
          gmsh::model::setPhysicalName(1, id, ids::boundary_name(id));
        }

      mesh::generate(2);

      // Move every node from its uniform position to the graded one. The
      // stored parametric coordinates are left alone: they are not written
      // to the file (Mesh.SaveParametric is off).
      std::vector<std::size_t> node_tags;
      std::vector<double>      coords, parametric;
      mesh::getNodes(node_tags, coords, parametric, -1, -1, false, false);
      for (std::size_t k = 0; k < node_tags.size(); ++k)
        {
          const double x =
            graded_coordinate(coords[3 * k], xb, x_index, lines.x_nodes);
          const double y =
            graded_coordinate(coords[3 * k + 1], yb, y_index, lines.y_nodes);
          mesh::setNode(node_tags[k], {x, y, 0.}, {});
        }
    }

    // Gmsh reports errors by throwing (General.AbortOnError = 2); the type
    // of the thrown object is not part of its documented interface.
    template <typename F>
    void
    with_gmsh_errors(const std::string &what, F &&f)
    {
      try
        {
          f();
        }
      catch (const std::exception &e)
        {
          throw std::runtime_error(what + ": " + e.what());
        }
      catch (const std::string &e)
        {
          throw std::runtime_error(what + ": " + e);
        }
      catch (const char *e)
        {
          throw std::runtime_error(what + ": " + e);
        }
      catch (...)
        {
          throw std::runtime_error(what + ": Gmsh failed");
        }
    }

    std::string
    point_text(const dealii::Point<2> &p)
    {
      std::ostringstream s;
      s << "(" << p[0] << ", " << p[1] << ") um";
      return s.str();
    }
  } // namespace

  MeshLines
  mesh_lines(const GeometryParameters &geometry, const MeshParameters &mesh)
  {
    const double      h = mesh.smallest_cell_nm / 1000;
    const GradingRule x_rule{h, mesh.growth_ratio, mesh.largest_lateral_cell_um};
    const GradingRule y_rule{h,
                             mesh.growth_ratio,
                             mesh.largest_vertical_cell_nm / 1000};
    const double      t = geometry.absorber_thickness_um;

    MeshLines         lines;
    std::vector<bool> x_refined, y_refined;
    if (geometry.layout == GeometryParameters::Layout::test_strip)
      {
        // Refined at both contacts and on both sides of the junction.
        const double xj  = geometry.junction_position_um;
        lines.x_breakpoints = {0.};
        if (xj > 0)
          lines.x_breakpoints.push_back(xj);
        lines.x_breakpoints.push_back(geometry.strip_length_um);
        x_refined.assign(lines.x_breakpoints.size(), true);
        lines.y_breakpoints = {0., t};
        y_refined           = {true, false};
      }
    else
      {
        // Refined on both sides of each finger edge; the gap centre and the
        // finger centres are mirror lines.
        const double a  = geometry.electron_finger_width_um / 2;
        const double g  = geometry.gap_um;
        lines.x_breakpoints = {0., a, a + g / 2, a + g, geometry.width_um()};
        x_refined           = {false, true, false, true, false};

        // Refined at the bottom contacts and at the interlayer tops (the
        // heterointerfaces), which therefore run through the whole period.
        std::vector<double> tops;
        for (const double nm :
             {geometry.electron_interlayer_nm, geometry.hole_interlayer_nm})
          if (nm > 0)
            tops.push_back(nm / 1000);
        std::sort(tops.begin(), tops.end());
        tops.erase(std::unique(tops.begin(), tops.end()), tops.end());
        lines.y_breakpoints = {0.};
        lines.y_breakpoints.insert(lines.y_breakpoints.end(),
                                   tops.begin(),
                                   tops.end());
        lines.y_breakpoints.push_back(t);
        y_refined.assign(lines.y_breakpoints.size(), true);
        y_refined.back() = false;
      }
    lines.x_nodes = graded_nodes(lines.x_breakpoints, x_refined, x_rule);
    lines.y_nodes = graded_nodes(lines.y_breakpoints, y_refined, y_rule);
    return lines;
  }

  void
  write_period_msh(const GeometryParameters &geometry,
                   const MeshParameters     &mesh,
                   const std::string        &msh_file)
  {
    geometry.validate();
    mesh.validate(geometry);
    const MeshLines lines = mesh_lines(geometry, mesh);
    const BlockIds  block = block_ids(geometry, lines);
    const auto      temporary = temporary_sibling(msh_file);

    with_gmsh_errors("Gmsh could not build the mesh for " + msh_file, [&]() {
      GmshSession session;
      gmsh::model::add("backcomb_cross_section");
      try
        {
          mesh_blocks(lines, block);
          gmsh::option::setNumber("Mesh.MshFileVersion", 4.1);
          gmsh::option::setNumber("Mesh.Binary", 0);
          gmsh::option::setNumber("Mesh.SaveAll", 0);
          gmsh::write(temporary.string());
        }
      catch (...)
        {
          gmsh::model::remove();
          throw;
        }
      gmsh::model::remove();
    });
    if (!std::filesystem::exists(temporary))
      throw std::runtime_error("cannot write " + msh_file);
    rename_or_throw(temporary, msh_file);
  }

  void
  read_triangulation(const std::string &msh_file, dealii::Triangulation<2> &tria)
  {
    if (!std::filesystem::is_regular_file(msh_file))
      throw InputError("mesh file " + msh_file + " does not exist");
    tria.clear();
    dealii::GridIn<2> grid_in;
    grid_in.attach_triangulation(tria);
    try
      {
        // This Gmsh-API reader opens and closes a Gmsh session of its own.
        // No function here calls it while a GmshSession is open, so the two
        // sessions never overlap.
        grid_in.read_msh(msh_file);
      }
    catch (const std::exception &e)
      {
        throw InputError("mesh file " + msh_file +
                         " cannot be read: " + std::string(e.what()));
      }

    for (const auto &cell : tria.active_cell_iterators())
      {
        if (ids::region_name(cell->material_id()).empty())
          throw InputError(msh_file,
                           std::to_string(cell->material_id()),
                           "the cell at " + point_text(cell->center()) +
                             " has a region id that is not in ids.h (1-" +
                             std::to_string(ids::n_regions) + ")");
        for (const auto &face : cell->face_iterators())
          if (face->at_boundary() &&
              ids::boundary_name(face->boundary_id()).empty())
            throw InputError(msh_file,
                             std::to_string(face->boundary_id()),
                             "the boundary face at " +
                               point_text(face->center()) +
                               " has no boundary id from ids.h (1-" +
                               std::to_string(ids::n_boundaries) + ")");
      }
  }

  void
  build_triangulation(const GeometryParameters &geometry,
                      const MeshParameters     &mesh,
                      dealii::Triangulation<2> &tria,
                      const std::string        &msh_file)
  {
    if (!msh_file.empty())
      {
        write_period_msh(geometry, mesh, msh_file);
        read_triangulation(msh_file, tria);
        return;
      }

    static std::atomic<unsigned int> counter{0};
    const auto file = std::filesystem::temp_directory_path() /
                      ("backcomb-mesh-" + std::to_string(getpid()) + "-" +
                       std::to_string(counter++) + ".msh");
    try
      {
        write_period_msh(geometry, mesh, file.string());
        read_triangulation(file.string(), tria);
      }
    catch (...)
      {
        std::error_code ignored;
        std::filesystem::remove(file, ignored);
        throw;
      }
    std::filesystem::remove(file);
  }

  MeshStatistics
  mesh_statistics(const dealii::Triangulation<2> &tria)
  {
    MeshStatistics s;
    const double   inf = std::numeric_limits<double>::infinity();
    s.min_size_um = s.min_x_size_um = s.min_y_size_um = inf;
    for (const auto &cell : tria.active_cell_iterators())
      {
        const auto   box = cell->bounding_box();
        const double dx  = box.side_length(0);
        const double dy  = box.side_length(1);
        ++s.n_cells;
        s.min_x_size_um = std::min(s.min_x_size_um, dx);
        s.min_y_size_um = std::min(s.min_y_size_um, dy);
        s.max_x_size_um = std::max(s.max_x_size_um, dx);
        s.max_y_size_um = std::max(s.max_y_size_um, dy);
        s.worst_aspect_ratio =
          std::max(s.worst_aspect_ratio, std::max(dx / dy, dy / dx));
      }
    s.min_size_um = std::min(s.min_x_size_um, s.min_y_size_um);
    s.max_size_um = std::max(s.max_x_size_um, s.max_y_size_um);
    if (s.n_cells == 0)
      s.min_size_um = s.min_x_size_um = s.min_y_size_um = 0;
    return s;
  }

  void
  write_mesh_preview(const dealii::Triangulation<2> &tria,
                     const std::string              &vtu_file)
  {
    auto points = vtkSmartPointer<vtkPoints>::New();
    points->SetDataTypeToDouble();
    for (const auto &v : tria.get_vertices())
      points->InsertNextPoint(v[0], v[1], 0.);

    auto grid = vtkSmartPointer<vtkUnstructuredGrid>::New();
    grid->SetPoints(points);
    auto region = vtkSmartPointer<vtkIntArray>::New();
    region->SetName("region_id");
    auto boundary = vtkSmartPointer<vtkIntArray>::New();
    boundary->SetName("boundary_id");

    for (const auto &cell : tria.active_cell_iterators())
      {
        // deal.II numbers quad vertices lexicographically, VTK counter-
        // clockwise.
        const vtkIdType quad[4] = {
          static_cast<vtkIdType>(cell->vertex_index(0)),
          static_cast<vtkIdType>(cell->vertex_index(1)),
          static_cast<vtkIdType>(cell->vertex_index(3)),
          static_cast<vtkIdType>(cell->vertex_index(2))};
        grid->InsertNextCell(VTK_QUAD, 4, quad);
        region->InsertNextValue(cell->material_id());
        boundary->InsertNextValue(-1);
      }
    for (const auto &cell : tria.active_cell_iterators())
      for (const auto &face : cell->face_iterators())
        if (face->at_boundary())
          {
            const vtkIdType line[2] = {
              static_cast<vtkIdType>(face->vertex_index(0)),
              static_cast<vtkIdType>(face->vertex_index(1))};
            grid->InsertNextCell(VTK_LINE, 2, line);
            region->InsertNextValue(-1);
            boundary->InsertNextValue(face->boundary_id());
          }
    grid->GetCellData()->AddArray(region);
    grid->GetCellData()->AddArray(boundary);

    const auto temporary = temporary_sibling(vtu_file);
    auto       writer    = vtkSmartPointer<vtkXMLUnstructuredGridWriter>::New();
    writer->SetFileName(temporary.string().c_str());
    writer->SetInputData(grid);
    if (writer->Write() != 1)
      {
        std::error_code ignored;
        std::filesystem::remove(temporary, ignored);
        throw std::runtime_error("cannot write " + vtu_file);
      }
    rename_or_throw(temporary, vtu_file);
  }
} // namespace backcomb::geometry
