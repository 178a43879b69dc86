#include "postprocess/dead_zone.h"

#include <vtkCellData.h>
#include <vtkClipDataSet.h>
#include <vtkContourFilter.h>
#include <vtkDataArray.h>
#include <vtkDataSetAttributes.h>
#include <vtkIntegrateAttributes.h>
#include <vtkNew.h>
#include <vtkPointData.h>
#include <vtkPolyData.h>
#include <vtkThreshold.h>
#include <vtkUnstructuredGrid.h>
#include <vtkXMLPolyDataWriter.h>
#include <vtkXMLUnstructuredGridReader.h>

#include <cstdio>
#include <filesystem>
#include <stdexcept>

namespace backcomb::postprocess
{
  namespace
  {
    constexpr const char *fc_name = "collection_probability";
    constexpr const char *g_name  = "generation_rate_per_cm3_s";

    // Area and integral of G over a data set (vtkIntegrateAttributes puts
    // the area in the cell array "Area" and the integrals of point arrays
    // in point arrays of the same names).
    std::pair<double, double>
    integrate(vtkAlgorithmOutput *input)
    {
      vtkNew<vtkIntegrateAttributes> integrate;
      integrate->SetInputConnection(input);
      integrate->Update();
      vtkUnstructuredGrid *out = integrate->GetOutput();
      double area = 0, generated = 0;
      if (vtkDataArray *a = out->GetCellData()->GetArray("Area"))
        if (a->GetNumberOfTuples() > 0)
          area = a->GetTuple1(0);
      if (vtkDataArray *g = out->GetPointData()->GetArray(g_name))
        if (g->GetNumberOfTuples() > 0)
          generated = g->GetTuple1(0);
      return {area, generated};
    }
  } // namespace

  DeadZone
  analyse_dead_zone(const std::string &vtu_file, const double threshold, const std::string &contour_file)
  {
    vtkNew<vtkXMLUnstructuredGridReader> reader;
    reader->SetFileName(vtu_file.c_str());
    reader->Update();
    vtkUnstructuredGrid *grid = reader->GetOutput();
    if (grid->GetNumberOfCells() == 0 || !grid->GetPointData()->GetArray(fc_name))
      throw std::runtime_error(vtu_file + ": no cells or no field '" + fc_name + "'");

    // The absorber only (interlayers have no generation and no dead zone).
    vtkNew<vtkThreshold> absorber;
    absorber->SetInputConnection(reader->GetOutputPort());
    // deal.II writes cell data as point values of each cell's own patch.
    absorber->SetInputArrayToProcess(0, 0, 0, vtkDataObject::FIELD_ASSOCIATION_POINTS, "in_absorber");
    absorber->SetLowerThreshold(0.5);
    absorber->SetUpperThreshold(1.5);
    absorber->SetThresholdFunction(vtkThreshold::THRESHOLD_BETWEEN);

    // Keep the part with f_c below the threshold.
    vtkNew<vtkClipDataSet> clip;
    clip->SetInputConnection(absorber->GetOutputPort());
    clip->SetInputArrayToProcess(0, 0, 0, vtkDataObject::FIELD_ASSOCIATION_POINTS, fc_name);
    clip->SetValue(threshold);
    clip->InsideOutOn();
    clip->Update();

    DeadZone d;
    d.threshold                         = threshold;
    const auto [area, generated]        = integrate(absorber->GetOutputPort());
    const auto [dead_area, dead_generated] = integrate(clip->GetOutputPort());
    d.absorber_area_um2  = area;
    d.dead_area_um2      = dead_area;
    d.area_fraction      = area > 0 ? dead_area / area : 0;
    d.generated_fraction = generated > 0 ? dead_generated / generated : 0;
    vtkUnstructuredGrid *dead = clip->GetOutput();
    d.present = dead->GetNumberOfCells() > 0 && dead_area > 0;
    if (d.present)
      {
        double b[6];
        dead->GetBounds(b);
        d.x_min_um = b[0];
        d.x_max_um = b[1];
      }

    if (!contour_file.empty())
      {
        vtkNew<vtkContourFilter> contour;
        contour->SetInputConnection(absorber->GetOutputPort());
        contour->SetInputArrayToProcess(0, 0, 0, vtkDataObject::FIELD_ASSOCIATION_POINTS, fc_name);
        contour->SetValue(0, threshold);
        vtkNew<vtkXMLPolyDataWriter> writer;
        writer->SetInputConnection(contour->GetOutputPort());
        const std::string tmp = contour_file + ".tmp";
        writer->SetFileName(tmp.c_str());
        if (writer->Write() != 1)
          {
            std::remove(tmp.c_str());
            throw std::runtime_error("cannot write " + contour_file);
          }
        std::filesystem::rename(tmp, contour_file);
      }
    return d;
  }
} // namespace backcomb::postprocess
