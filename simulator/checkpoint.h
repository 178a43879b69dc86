// Checkpoint of a J-V run, so that a killed `backcomb solve` continues from
// the last converged bias when it is run again with the same case into the
// same folder.
//
// FOLDER/checkpoint/ holds one file `fingerprint` (what the stored states
// belong to: case text, overrides, mesh, unknowns, processes, format) and
// one file `point-NNNN.bin` per converged operating point (its sweep,
// bias, current, Newton steps, step halvings and the complete nodal state,
// in binary, with a checksum). Every file is written atomically. The
// folder is removed once summary.json is written.
#pragma once

#include "fem/jv_scan.h"

#include <deal.II/lac/vector.h>

#include <mpi.h>

#include <mutex>

#include <string>
#include <vector>

namespace backcomb::simulator
{
  using fem::StoredPoint;

  // The fingerprint text of a run: a different text means the stored states
  // belong to another problem and must not be used.
  std::string checkpoint_fingerprint(const std::string              &case_text,
                                     const std::vector<std::string> &overrides,
                                     const std::string              &mesh_file,
                                     unsigned                        unknowns,
                                     unsigned                        processes);

  // Serialised form of a point (exposed for tests) and its inverse; the
  // inverse returns false for a damaged or foreign file.
  std::string encode_point(const StoredPoint &p);
  bool        decode_point(const std::string &bytes, StoredPoint &p);

  class Checkpoint : public fem::PointStore
  {
  public:
    // All processes of `comm` construct it with the same arguments.
    Checkpoint(const std::string &results_folder, const std::string &fingerprint, MPI_Comm comm);

    // The stored points of an earlier run with the same fingerprint, in the
    // order they were computed, on every process. A checkpoint with another
    // fingerprint is removed with a one-line notice on rank 0; damaged
    // point files and leftover temporary files are ignored. Collective.
    std::vector<StoredPoint> load(bool quiet);

    // Stores one point (rank 0 writes; the others only count). Collective,
    // so that an I/O error on rank 0 stops every process alike
    // (OutputError naming the file). On one process it may be called from
    // two threads (the light and the dark J-V): the points are numbered
    // one after the other, and no MPI call is made.
    void save(const StoredPoint &p) override;

    // Removes the checkpoint folder (rank 0), after the results are written.
    void remove() const;

    const std::string &folder() const { return dir; }

  private:
    std::string dir, fingerprint;
    MPI_Comm    comm;
    bool        root;
    unsigned    next = 1; // number of the next point file
    bool        fingerprint_written = false;
    std::mutex  saving;
  };
} // namespace backcomb::simulator
