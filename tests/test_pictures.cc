// The pictures a run writes without ParaView (PLplot): the J-V plot, the
// collection-probability map with the dead-zone contour, and the mesh near
// a finger edge, read back as pixels.
#include "postprocess/plots.h"
#include "simulator/case_file.h"
#include "simulator/case_run.h"
#include "tests/temp_folder.h"

#include <gtest/gtest.h>
#include <nlohmann/json.hpp>
#include <vtkDataArray.h>
#include <vtkImageData.h>
#include <vtkNew.h>
#include <vtkPNGReader.h>
#include <vtkPointData.h>
#include <vtkPoints.h>
#include <vtkPolyData.h>
#include <vtkProbeFilter.h>
#include <vtkXMLUnstructuredGridReader.h>

#include <array>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <vector>

using namespace backcomb;

namespace
{
  struct Picture
  {
    int                            width = 0, height = 0;
    std::vector<std::array<int, 3>> rgb; // row 0 at the top

    const std::array<int, 3> &
    at(int column, int row) const
    {
      return rgb[std::size_t(row) * width + column];
    }
  };

  Picture
  read_png(const std::filesystem::path &file)
  {
    vtkNew<vtkPNGReader> reader;
    reader->SetFileName(file.string().c_str());
    reader->Update();
    vtkImageData *image = reader->GetOutput();
    int           dims[3];
    image->GetDimensions(dims);
    Picture p;
    p.width = dims[0], p.height = dims[1];
    vtkDataArray *s = image->GetPointData()->GetScalars();
    p.rgb.resize(std::size_t(p.width) * p.height);
    for (int row = 0; row < p.height; ++row)
      for (int col = 0; col < p.width; ++col)
        {
          // VTK's row 0 is the bottom one.
          const vtkIdType k = vtkIdType(p.height - 1 - row) * p.width + col;
          for (int c = 0; c < 3; ++c)
            p.rgb[std::size_t(row) * p.width + col][c] = int(s->GetComponent(k, c));
        }
    return p;
  }

  // Viridis (S. van der Walt and N. Smith, the matplotlib 2.0 default
  // map, 2015) at 17 evenly spaced values, as published by matplotlib.
  constexpr int viridis[17][3] = {{68, 1, 84},    {72, 24, 106},  {71, 45, 123},  {66, 64, 134},  {59, 82, 139},
                                  {51, 99, 141},  {44, 114, 142}, {38, 130, 142}, {33, 145, 140}, {31, 160, 136},
                                  {40, 174, 128}, {63, 188, 115}, {94, 201, 98},  {132, 212, 75}, {173, 220, 48},
                                  {216, 226, 25}, {253, 231, 37}};

  // The value 0..1 whose viridis colour is nearest to `c` (the map
  // interpolated linearly at 1/1600 steps) and the distance to it.
  std::pair<double, double>
  viridis_value(const std::array<int, 3> &c)
  {
    double best = 0, dist = 1e9;
    for (int i = 0; i <= 1600; ++i)
      {
        const double u = i / 1600.0 * 16;
        const int    k = std::min(15, int(u));
        double       d = 0;
        for (int ch = 0; ch < 3; ++ch)
          {
            const double v = viridis[k][ch] + (u - k) * (viridis[k + 1][ch] - viridis[k][ch]);
            d += (v - c[ch]) * (v - c[ch]);
          }
        if (d < dist)
          dist = d, best = i / 1600.0;
      }
    return {best, std::sqrt(dist)};
  }

  bool
  is_viridis(const std::array<int, 3> &c)
  {
    return viridis_value(c).second < 10;
  }

  bool
  is_white(const std::array<int, 3> &c)
  {
    return c[0] > 235 && c[1] > 235 && c[2] > 235;
  }

  double
  probe(const std::string &vtu, double x, double y)
  {
    vtkNew<vtkXMLUnstructuredGridReader> reader;
    reader->SetFileName(vtu.c_str());
    vtkNew<vtkPoints> points;
    points->InsertNextPoint(x, y, 0);
    vtkNew<vtkPolyData> at;
    at->SetPoints(points);
    vtkNew<vtkProbeFilter> p;
    p->SetInputData(at);
    p->SetSourceConnection(reader->GetOutputPort());
    p->Update();
    return p->GetOutput()->GetPointData()->GetArray("collection_probability")->GetTuple1(0);
  }
} // namespace

TEST(Pictures, ExaggerationIsOneTwoOrFiveTimesAPowerOfTen)
{
  EXPECT_EQ(postprocess::film_exaggeration(210, 0.4), 100); // 131 -> 100
  EXPECT_EQ(postprocess::film_exaggeration(10, 0.4), 5);    // 6.25 -> 5
  EXPECT_EQ(postprocess::film_exaggeration(40, 1), 10);     // exactly 10
  EXPECT_EQ(postprocess::film_exaggeration(30, 1), 5);      // 7.5 -> 5
  EXPECT_EQ(postprocess::film_exaggeration(12, 1), 2);      // 3 -> 2
  EXPECT_EQ(postprocess::film_exaggeration(2, 1), 1);       // 0.5: no exaggeration
}

TEST(Pictures, SolveAndMeshDrawTheirPictures)
{
  namespace fs   = std::filesystem;
  const fs::path dir = test_support::fresh_folder("pictures");
  // The small comb period of the ParaView test at a gap whose middle is a
  // dead zone, flanked by collecting regions.
  const simulator::Case c =
    simulator::read_case(std::string(BACKCOMB_TEST_SOURCE_DIR) + "/views_tiny.prm", {"Geometry/Gap=8"});
  simulator::RunOptions o;
  o.folder = (dir / "solve").string();
  o.quiet  = true;
  ASSERT_EQ(simulator::run_solve(c, o), 0);
  for (const char *f : {"jv.png", "jv.svg", "collection.png", "collection.svg", "view_in_paraview.py"})
    EXPECT_TRUE(fs::exists(dir / "solve" / f)) << f;

  std::ifstream        in(dir / "solve" / "summary.json");
  const nlohmann::json s         = nlohmann::json::parse(in);
  const double         width     = s["period"]["width_um"];
  const double         thickness = s["period"]["absorber_thickness_um"];
  const std::string    vtu       = (dir / "solve" / s["collection_map"]["file"].get<std::string>()).string();

  // The film: the rows and columns of viridis pixels above the colour bar
  // (the lowest fifth of the picture).
  const Picture p = read_png(dir / "solve" / "collection.png");
  ASSERT_EQ(p.width, 1400);
  ASSERT_EQ(p.height, 600);
  int top = p.height, bottom = -1, left = p.width, right = -1;
  for (int row = 0; row < p.height * 4 / 5; ++row)
    for (int col = 0; col < p.width; ++col)
      if (is_viridis(p.at(col, row)))
        top = std::min(top, row), bottom = std::max(bottom, row), left = std::min(left, col),
        right = std::max(right, col);
  ASSERT_GT(bottom, top);
  const double box_w = right - left + 1, box_h = bottom - top + 1;
  const double factor = postprocess::film_exaggeration(width, thickness);
  EXPECT_NEAR(box_w / box_h, width / (thickness * factor), 0.04 * width / (thickness * factor));
  std::printf("collection.png: film %g x %g pixels, period %g um x %g um at x%g\n", box_w, box_h, width,
              thickness, factor);

  // The colours are f_c: read back through viridis at mid-height.
  const int row    = (top + bottom) / 2;
  double    worst  = 0;
  int       white  = 0, sampled = 0;
  for (int k = 0; k < 20; ++k)
    {
      const double x   = width * (k + 0.5) / 20;
      const int    col = left + int(x / width * box_w);
      // Away from the contour, whose smoothed edges blend white into the map.
      bool clean = true;
      for (int d = -4; d <= 4; ++d)
        clean = clean && is_viridis(p.at(col + d, row));
      if (!clean)
        continue;
      const double seen = viridis_value(p.at(col, row)).first, f = probe(vtu, x, 0.5 * thickness);
      std::printf("x = %.3f um: colour reads %.3f, f_c %.3f\n", x, seen, f);
      worst = std::max(worst, std::abs(seen - f));
      ++sampled;
    }
  for (int col = left; col <= right; ++col)
    white += is_white(p.at(col, row));
  EXPECT_GE(sampled, 15);
  EXPECT_LT(worst, 0.05) << "colour against f_c";
  // f_c crosses the threshold four times along the period here (collecting
  // beside each finger, dead in the middle and above the fingers): the
  // white contour cuts the mid-height row at least twice.
  EXPECT_GE(white, 2);
  EXPECT_LT(white, 40);

  // J-V plot: the page, and the light curve drawn in the first palette
  // colour.
  const Picture jv = read_png(dir / "solve" / "jv.png");
  EXPECT_EQ(jv.width, 1100);
  EXPECT_EQ(jv.height, 800);
  int curve = 0;
  for (const auto &c : jv.rgb)
    curve += std::abs(c[0] - 0) + std::abs(c[1] - 114) + std::abs(c[2] - 178) < 30;
  EXPECT_GT(curve, 1000);

  // The mesh near the finger edge: cell lines, at true scale.
  o.folder = (dir / "mesh").string();
  ASSERT_EQ(simulator::run_mesh(c, o), 0);
  const Picture mesh = read_png(dir / "mesh" / "mesh.png");
  EXPECT_EQ(mesh.width, 1100);
  int lines = 0;
  for (const auto &c : mesh.rgb)
    lines += c[2] - c[0] > 40; // the blue of the lines, also where smoothed into white
  EXPECT_GT(lines, 2000);
  fs::remove_all(dir);
}

// The J-V plot of a hysteresis scan: each scan curve in its own palette
// colour (the third and fourth, after light and dark), and none of those
// colours without scans. Synthetic curves: a diode-like light curve and
// two scans offset from it.
TEST(Pictures, JVPlotDrawsTheScanCurves)
{
  namespace fs       = std::filesystem;
  const fs::path dir = test_support::fresh_folder("jv-scans");
  postprocess::JVPlotData d;
  for (int k = 0; k <= 40; ++k)
    {
      const double v = 0.03 * k, j = 20 - 1e-9 * std::exp(v / 0.05);
      d.light_v.push_back(v), d.light_j.push_back(j);
    }
  auto count = [](const Picture &p, const std::array<int, 3> &colour) {
    int n = 0;
    for (const auto &c : p.rgb)
      n += std::abs(c[0] - colour[0]) + std::abs(c[1] - colour[1]) + std::abs(c[2] - colour[2]) < 30;
    return n;
  };
  std::vector<std::string> warnings;
  postprocess::write_jv_plots(d, (dir / "plain").string(), warnings);
  postprocess::JVPlotData::Curve reverse{"reverse scan, 0.1 V/s", d.light_v, d.light_j},
    forward{"forward scan, 0.1 V/s", d.light_v, d.light_j};
  for (double &j : reverse.j)
    j += 3;
  for (double &j : forward.j)
    j -= 3;
  d.scans = {reverse, forward};
  postprocess::write_jv_plots(d, (dir / "scans").string(), warnings);
  EXPECT_TRUE(warnings.empty());
  const Picture plain = read_png(dir / "plain.png"), scans = read_png(dir / "scans.png");
  const std::array<int, 3> green{{0, 158, 115}}, pink{{204, 121, 167}};
  std::printf("pixels of the scan colours: %d, %d (with scans), %d, %d (without)\n", count(scans, green),
              count(scans, pink), count(plain, green), count(plain, pink));
  EXPECT_GT(count(scans, green), 500);
  EXPECT_GT(count(scans, pink), 500);
  EXPECT_LT(count(plain, green), 20);
  EXPECT_LT(count(plain, pink), 20);
  fs::remove_all(dir);
}
