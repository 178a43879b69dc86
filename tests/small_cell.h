// A film of the demo's kind (round numbers of the usual order for a
// solution-processed halide absorber; common practice, no single source) on
// a small comb period (strip_mesh.h: make_small_period) with selective
// contacts, lit from the top with an absorption length of 0.2 um.
#pragma once

#include "fem/device.h"
#include "geometry/ids.h"

#include <cmath>

namespace backcomb::test_support
{
  struct SmallCell
  {
    fem::Material          film;
    fem::ContactParameters electron, hole;
    fem::SurfaceParameters top, gap;
    SmallCell()
    {
      film.mu_n = 2, film.mu_p = 1.5;
      film.tau_n = film.tau_p = 1e-7;
      film.B_rad = 5e-11, film.photon_recycling = 0.2;
      film.C_n = film.C_p = 1e-28;
      electron.work_function = 4.0, electron.S_n = 1e7, electron.S_p = 10;
      hole.work_function = 5.4, hole.S_n = 10, hole.S_p = 1e7;
      top.S_n = top.S_p = 20;
      gap.S_n = gap.S_p = 100;
    }
    fem::DeviceModel
    device() const
    {
      namespace ids = backcomb::geometry::ids;
      return fem::DeviceModel(300.0, {{ids::absorber, film}}, {ids::absorber}, electron, hole, top, gap,
                              [](double, double y) { return 4e21 * std::exp(-y / 0.2); });
    }
  };
} // namespace backcomb::test_support
