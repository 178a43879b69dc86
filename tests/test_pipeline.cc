// End-to-end checks of the case pipeline: case file -> mesh -> solve ->
// result files, read back with VTK's XML reader and parsed as JSON.
#include "fem/constants.h"
#include "geometry/period_mesh.h"
#include "simulator/case_file.h"
#include "simulator/case_run.h"

#include "tests/temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>
#include <vtkCellData.h>
#include <vtkDataArray.h>
#include <vtkNew.h>
#include <vtkUnstructuredGrid.h>
#include <vtkXMLUnstructuredGridReader.h>

#include <cstdio>
#include <filesystem>
#include <fstream>

using namespace backcomb;
namespace fs = std::filesystem;

using test_support::fresh_folder;

namespace
{
  std::string
  write_case(const fs::path &folder, const std::string &text)
  {
    const fs::path f = folder / "case.prm";
    std::ofstream(f) << text;
    return f.string();
  }
} // namespace

// The mesh subcommand's preview has one quad per cell plus one line per
// boundary face, and both id fields.
TEST(Pipeline, MeshPreviewReadsBack)
{
  const fs::path dir  = fresh_folder("mesh");
  const auto     file = write_case(dir, "subsection Geometry\n  set Gap = 50\n  set Absorber thickness = 0.2\nend\n");
  const simulator::Case c = simulator::read_case(file, {"Geometry/Electron finger width=4"});
  simulator::RunOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(simulator::run_mesh(c, o), 0);
  ASSERT_TRUE(fs::exists(dir / "out" / "mesh.msh"));

  vtkNew<vtkXMLUnstructuredGridReader> reader;
  reader->SetFileName((dir / "out" / "mesh.vtu").c_str());
  reader->Update();
  vtkUnstructuredGrid *grid = reader->GetOutput();
  ASSERT_NE(grid->GetCellData()->GetArray("region_id"), nullptr);
  ASSERT_NE(grid->GetCellData()->GetArray("boundary_id"), nullptr);
  // One quad per cell and one line per boundary face of the mesh file.
  long quads = 0, lines = 0;
  for (vtkIdType i = 0; i < grid->GetNumberOfCells(); ++i)
    (grid->GetCellType(i) == 9 /* VTK_QUAD */ ? quads : lines) += 1;
  dealii::Triangulation<2> tria;
  geometry::read_triangulation((dir / "out" / "mesh.msh").string(), tria);
  long boundary_faces = 0;
  for (const auto &cell : tria.active_cell_iterators())
    for (const unsigned f : cell->face_indices())
      boundary_faces += cell->face(f)->at_boundary();
  EXPECT_EQ(quads, long(tria.n_active_cells()));
  EXPECT_EQ(lines, boundary_faces);
  EXPECT_GT(quads, 100);
  // Region ids of quads are the absorber (1): no interlayers here.
  vtkDataArray *region = grid->GetCellData()->GetArray("region_id");
  for (vtkIdType i = 0; i < grid->GetNumberOfCells(); ++i)
    if (grid->GetCellType(i) == 9)
      {
        ASSERT_EQ(region->GetTuple1(i), 1.0);
      }
  fs::remove_all(dir);
}

// A short lit strip between an electron-selective and a hole-selective end
// contact, lifetimes far longer than the transit time (10 us: with 1 ms the
// open-circuit densities exceed N_v and V_oc the band gap, which the
// physical bounds refuse): every generated pair is collected, so J_sc = q G t per unit footprint (charge
// conservation; analytic), and the J-V, summary and fields are written.
TEST(Pipeline, StripCollectsEveryPairAtShortCircuit)
{
  const fs::path dir  = fresh_folder("solve");
  const auto     file = write_case(dir, R"(
subsection Geometry
  set Layout = test strip
  set Strip length = 1
  set Absorber thickness = 0.4
end
subsection Absorber
  subsection Transport
    set Electron mobility = 10
    set Hole mobility = 10
  end
  subsection Recombination
    subsection SRH
      set Electron lifetime = 1e-5
      set Hole lifetime = 1e-5
    end
  end
end
subsection Electron contact
  set Work function = 4.0
  set Hole transfer velocity = 0
end
subsection Hole contact
  set Work function = 5.4
  set Electron transfer velocity = 0
end
subsection Illumination
  set Generation model = uniform
  set Uniform generation rate = 1e21
end
subsection J-V scan
  set Start voltage = 0
  set Stop voltage = 1.2
  set Voltage step = 0.05
  set Dark scan = false
end
)");
  const simulator::Case c = simulator::read_case(file, {});
  simulator::RunOptions o;
  o.folder = (dir / "out").string();
  o.quiet  = true;
  ASSERT_EQ(simulator::run_solve(c, o), 0);

  std::ifstream        in(dir / "out" / "summary.json");
  const nlohmann::json s = nlohmann::json::parse(in);
  ASSERT_EQ(s["status"], "converged");
  const double Jsc      = s["metrics"]["Jsc_mA_per_cm2"];
  const double expected = constants::q * 1e21 * 0.4e-4 * 1e3; // mA/cm^2
  EXPECT_NEAR(Jsc / expected, 1.0, 1e-3);
  EXPECT_NEAR(double(s["generation_current_mA_per_cm2"]) / expected, 1.0, 1e-6);
  EXPECT_TRUE(fs::exists(dir / "out" / "jv.csv"));
  EXPECT_TRUE(fs::exists(dir / "out" / "fields.pvd"));
  EXPECT_TRUE(fs::exists(dir / "out" / "fields" / "light_V0.0000.vtu"));
  fs::remove_all(dir);
}

// Mesh independence of the short-film case (cases/short-film.prm, the first demo): Jsc, Voc and PCE change by less than
// 0.5% when every cell size is halved (smallest and largest sizes halved,
// growth ratio square-rooted: twice the cells in each direction).
TEST(Pipeline, DemoIsMeshIndependent)
{
  const fs::path dir = fresh_folder("mesh-independence");
  const std::string demo = std::string(BACKCOMB_SOURCE_DIR) + "/cases/short-film.prm";
  const std::vector<std::string> common{"Geometry/Gap=5", "J-V scan/Dark scan=false",
                                        "J-V scan/Start voltage=0", "J-V scan/Voltage step=0.05",
                                        "Output/Write fields=false", "Output/Field biases=0"};
  nlohmann::json result[2];
  for (int k = 0; k < 2; ++k)
    {
      std::vector<std::string> o = common;
      if (k == 1)
        for (const char *s : {"Mesh/Smallest cell=1", "Mesh/Growth ratio=1.118", "Mesh/Largest lateral cell=1",
                              "Mesh/Largest vertical cell=10"})
          o.push_back(s);
      const simulator::Case c = simulator::read_case(demo, o);
      simulator::RunOptions opt;
      opt.folder = (dir / std::to_string(k)).string();
      opt.quiet  = true;
      ASSERT_EQ(simulator::run_solve(c, opt), 0);
      std::ifstream in(dir / std::to_string(k) / "summary.json");
      result[k] = nlohmann::json::parse(in);
    }
  for (const char *key : {"Jsc_mA_per_cm2", "Voc_V", "PCE_percent"})
    {
      const double a = result[0]["metrics"][key], b = result[1]["metrics"][key];
      std::printf("%s: %.6g (cells %d) -> %.6g (cells %d), change %.3f %%\n", key, a,
                  int(result[0]["mesh"]["cells"]), b, int(result[1]["mesh"]["cells"]), 100 * (b - a) / a);
      EXPECT_NEAR(b / a, 1.0, 0.005) << key;
    }
  fs::remove_all(dir);
}
