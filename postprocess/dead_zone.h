// Dead zones: where the local collection probability f_c falls below a
// threshold. Computed from a written field file with VTK filters
// (threshold to the absorber, clip at f_c = threshold, integration over the
// clipped cells, contour line), not with hand-written geometry.
#pragma once

#include <string>

namespace backcomb::postprocess
{
  struct DeadZone
  {
    double threshold          = 0.5;
    double absorber_area_um2  = 0; // per unit depth: um^2 of the cross-section
    double dead_area_um2      = 0;
    double area_fraction      = 0; // dead / absorber area
    double generated_fraction = 0; // pairs generated in the dead zone / all
    bool   present            = false;
    double x_min_um = 0, x_max_um = 0; // lateral extent of the dead region
    double width_um() const { return present ? x_max_um - x_min_um : 0.0; }
    double centre_um() const { return 0.5 * (x_min_um + x_max_um); }
  };

  // Reads `vtu_file` (as written by DriftDiffusionSolver::write_fields with
  // the collection probability) and analyses the dead zone. If
  // `contour_file` is not empty, writes the f_c = threshold contour as VTK
  // polylines (.vtp) atomically. Throws std::runtime_error on I/O failure.
  DeadZone analyse_dead_zone(const std::string &vtu_file, double threshold,
                             const std::string &contour_file);
} // namespace backcomb::postprocess
