// What a model predicts for one measured device, without writing results:
// the light and dark J-V at the measured biases, the EQE at the measured
// wavelengths (from the collection map at short circuit under the case's
// light) and the open-circuit voltage at the measured light levels. The
// calibration (study/calibration.h) compares these with the data.
#pragma once

#include "fem/drift_diffusion.h"
#include "simulator/case_file.h"

#include <mpi.h>

#include <string>
#include <vector>

namespace backcomb::simulator
{
  struct ResponseRequest
  {
    std::vector<double> light_biases, dark_biases; // V
    std::vector<double> eqe_wavelengths_nm;        // nm, within the optical model's range
    std::vector<double> voc_light_factors;         // light levels, in units of the case's intensity
  };

  // Each value NaN where the model has no converged state for it.
  struct DeviceResponse
  {
    std::vector<double> light_current, dark_current; // mA/cm^2 per footprint, generated current positive
    std::vector<double> eqe;                         // fraction of incident photons
    std::vector<double> voc;                         // V
    std::vector<std::string> failures;               // why values are missing
    unsigned                 newton = 0;             // Newton steps spent
  };

  // The state under full light at short circuit of an earlier solve of
  // the same device (same mesh), the first guess of the next solve with
  // other parameter values: a converged Newton solve from it replaces the
  // light ramp from equilibrium (which is the fall-back). Results agree
  // with a solve from scratch to the Newton tolerance.
  struct WarmStart
  {
    dealii::Vector<double> light;
  };

  // Meshes the case (the mesh file goes to `scratch`, which must exist),
  // solves what `r` asks for and returns it (with `warm`, starting from
  // and updating its state). Every process of `comm` gets
  // the same response. Throws InputError when the case cannot give what is
  // asked (light data for an unlit case, EQE without a spectral model or
  // outside its wavelengths).
  DeviceResponse device_response(const Case &c, const ResponseRequest &r, const std::string &scratch,
                                 MPI_Comm comm, WarmStart *warm = nullptr);

  // The EQE per wavelength of the optical model from a collection map f_c:
  // the pairs of each wavelength weighted by f_c over the absorber, per
  // photon incident on the footprint (summed over the processes of comm).
  std::vector<double> spectral_collection(const fem::DriftDiffusionSolver &solver, const fem::Generation &g,
                                          const dealii::Vector<double> &fc, MPI_Comm comm);
} // namespace backcomb::simulator
