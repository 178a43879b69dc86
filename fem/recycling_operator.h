// Photon recycling as lateral transport, the solver's side: the absorber is
// cut into lateral columns (the mesh's own columns of absorber cells), the
// net radiative emission B (np - n_i^2) of each column is integrated over
// the film thickness, an operator maps it to the re-absorbed generation of
// every column, and that generation is spread evenly over the column's
// thickness (a thin-film approximation: the film is thin compared with the
// lateral scales the operator resolves). The operator is built once per
// mesh from the column edges by a factory the case provides.
//
// Units at this interface: column edges in um, emission and generation per
// unit footprint area in cm^-2 s^-1.
#pragma once

#include <functional>
#include <memory>
#include <vector>

namespace backcomb::fem
{
  // Where the net radiative emission of the absorber goes, per unit
  // footprint area of the period (cm^-2 s^-1): averaged over the columns
  // with their widths as weights.
  struct PhotonBalance
  {
    double emitted        = 0;
    double reabsorbed     = 0; // in the film: new electron-hole pairs
    double escaped_top    = 0; // through the free surface
    double lost_substrate = 0; // into the substrate over the gap
    double lost_fingers   = 0; // absorbed in (or through) the fingers
    // emitted minus every term: zero up to the operator's accuracy.
    double unbooked() const { return emitted - reabsorbed - escaped_top - lost_substrate - lost_fingers; }
  };

  class RecyclingOperator
  {
  public:
    virtual ~RecyclingOperator() = default;
    // Net emission per column -> re-absorbed generation per column (same
    // length); linear. With `balance`, where the emitted photons go.
    virtual std::vector<double> reabsorbed(const std::vector<double> &emission,
                                           PhotonBalance            *balance = nullptr) const = 0;
  };

  // Builds the operator for the columns [edges[i], edges[i+1]] (um,
  // increasing, from one mirror side of the period to the other).
  using RecyclingFactory =
    std::function<std::unique_ptr<const RecyclingOperator>(const std::vector<double> &column_edges_um)>;
} // namespace backcomb::fem
