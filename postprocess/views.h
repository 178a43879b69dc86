// Ready-made ParaView views of a result (postprocess/view_in_paraview.py,
// built into the program) and the finger bars they draw under the film.
#pragma once

#include "postprocess/plots.h"

#include <string>

namespace backcomb::postprocess
{
  // The file name of the view script in a results folder.
  inline const char *const view_script_name = "view_in_paraview.py";

  // Writes FOLDER/view_in_paraview.py atomically (OutputError on failure).
  void write_view_script(const std::string &folder);

  // Both fingers of a period (x from 0 across the electron finger's half,
  // the gap and the hole finger's half) as bars of `height_um` below the
  // film (y from -height_um to 0): a VTK polydata file with the cell field
  // "finger" (1 electron-selective, 2 hole-selective), written atomically
  // (std::runtime_error on failure).
  void write_finger_bars(const std::string &vtp_file, double electron_finger_half_width_um, double gap_um,
                         double hole_finger_half_width_um, double height_um);

  // The field `name` of a field file (as written by
  // DriftDiffusionSolver::write_fields) sampled on an nx x ny grid over
  // the film, x from 0 to `width_um`, y from 0 to `thickness_um`; NaN
  // outside the absorber. Throws std::runtime_error when the file or the
  // field is missing.
  FilmMapData film_map_from_fields(const std::string &vtu_file, const std::string &name, double width_um,
                                   double thickness_um, unsigned nx, unsigned ny);
} // namespace backcomb::postprocess
