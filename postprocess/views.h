// Ready-made ParaView views of a result (postprocess/view_in_paraview.py,
// built into the program) and the finger bars they draw under the film.
#pragma once

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
} // namespace backcomb::postprocess
