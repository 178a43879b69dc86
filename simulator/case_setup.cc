#include "simulator/case_setup.h"
#include "simulator/recycling_setup.h"

#include "base/errors.h"
#include "geometry/ids.h"
#include "geometry/period_mesh.h"

#include <deal.II/base/mpi.h>

namespace backcomb::simulator
{
  namespace ids = backcomb::geometry::ids;

  // Rank 0 writes the mesh file, then every process reads it. An error
  // on rank 0 is passed on to all processes so that none waits forever.
  void
  build_shared_mesh(const Case &c, const std::string &msh, dealii::Triangulation<2> &tria, MPI_Comm comm)
  {
    std::string error;
    bool        input_error = false;
    if (dealii::Utilities::MPI::this_mpi_process(comm) == 0)
      try
        {
          geometry::write_period_msh(c.geometry, c.mesh, msh);
        }
      catch (const InputError &e)
        {
          error       = e.what();
          input_error = true;
        }
      catch (const std::exception &e)
        {
          error = e.what();
        }
    error       = dealii::Utilities::MPI::broadcast(comm, error, 0);
    input_error = dealii::Utilities::MPI::broadcast(comm, input_error, 0);
    if (!error.empty())
      {
        if (input_error)
          throw InputError(error);
        throw OutputError(error);
      }
    try
      {
        geometry::read_triangulation(msh, tria);
      }
    catch (const InputError &)
      {
        throw;
      }
    catch (const std::exception &e)
      {
        throw OutputError(e.what());
      }
  }

  std::map<unsigned, fem::Material>
  materials_of(const Case &c)
  {
    std::map<unsigned, fem::Material> m{{ids::absorber, c.absorber}};
    if (c.geometry.layout == geometry::GeometryParameters::Layout::test_strip)
      m[ids::absorber_right] = c.absorber;
    if (c.geometry.electron_interlayer_nm > 0)
      m[ids::electron_interlayer] = c.electron_interlayer;
    if (c.geometry.hole_interlayer_nm > 0)
      m[ids::hole_interlayer] = c.hole_interlayer;
    return m;
  }

  fem::FingerLayout
  finger_layout(const Case &c)
  {
    fem::FingerLayout layout;
    layout.has_fingers                   = c.geometry.layout != geometry::GeometryParameters::Layout::test_strip;
    layout.electron_finger_half_width_um = 0.5 * c.geometry.electron_finger_width_um;
    layout.gap_um                        = c.geometry.gap_um;
    layout.hole_finger_half_width_um     = 0.5 * c.geometry.hole_finger_width_um;
    layout.electron_interlayer_um        = 1e-3 * c.geometry.electron_interlayer_nm;
    layout.hole_interlayer_um            = 1e-3 * c.geometry.hole_interlayer_nm;
    return layout;
  }


  std::unique_ptr<fem::DeviceModel>
  make_device(const Case &c, const fem::Generation &g)
  {
    auto device = std::make_unique<fem::DeviceModel>(
      c.device.temperature, materials_of(c), std::vector<unsigned>{ids::absorber, ids::absorber_right},
      c.electron_contact, c.hole_contact, c.top_surface, c.gap_interface,
      [&g](double x, double y) { return g.rate(x, y); });
    device->recycling = recycling_factory(c);
    return device;
  }
} // namespace backcomb::simulator
