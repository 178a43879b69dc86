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

#include "fem/photon_transport.h"

#include <cstddef>
#include <functional>
#include <memory>
#include <vector>

namespace backcomb::fem
{
  class RecyclingOperator
  {
  public:
    virtual ~RecyclingOperator() = default;
    // Net emission per column -> re-absorbed generation per column (same
    // length); linear. With `balance`, where the emitted photons go
    // (fem/photon_transport.h), per unit footprint.
    virtual std::vector<double> reabsorbed(const std::vector<double> &emission,
                                           PhotonBalance            *balance = nullptr) const = 0;
    // A share A of the emission that may be treated as re-absorbed where it
    // is emitted: the solver puts A B (np - n_i^2) into Newton's equations
    // point by point and leaves only the rest, K e - A e, to the outer
    // iteration, which then contracts with the lateral redistribution
    // instead of with the whole recycled share. The split moves only where
    // in a column's thickness the share A comes back (at the emitting
    // point instead of spread evenly), which the thin-film operator does
    // not resolve anyway. The slab re-absorption probability is the natural
    // choice (the columns of K sum to it).
    virtual double local_share() const { return 0; }
    // Bytes the operator holds (for the benchmark).
    virtual std::size_t memory_bytes() const { return 0; }
  };

  // The thin-film operator of fem/photon_transport.h on the solver's
  // columns: it takes thickness averages on bins that start at 0, the
  // solver gives thickness integrals on its mesh's columns.
  class FilmRecycling : public RecyclingOperator
  {
  public:
    FilmRecycling(const FilmOptics &film, const EmissionSpectrum &emission, std::vector<double> column_edges_um);
    std::vector<double> reabsorbed(const std::vector<double> &emission, PhotonBalance *balance) const override;
    // The slab re-absorption probability.
    double local_share() const override { return transport.slab_fates().absorbed; }
    std::size_t memory_bytes() const override { return transport.memory_bytes(); }
    const PhotonTransport &film_transport() const { return transport; }

  private:
    double          thickness_cm;
    PhotonTransport transport;
  };

  // Builds the operator for the columns [edges[i], edges[i+1]] (um,
  // increasing, from one mirror side of the period to the other).
  using RecyclingFactory =
    std::function<std::unique_ptr<const RecyclingOperator>(const std::vector<double> &column_edges_um)>;

  // The factory of FilmRecycling operators for one film and emission.
  RecyclingFactory film_recycling(const FilmOptics &film, const EmissionSpectrum &emission);
} // namespace backcomb::fem
