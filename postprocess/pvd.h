// ParaView collection files (.pvd): a list of data files, each with a
// "time" value, which ParaView steps through with its play button (a bias
// for one solve, a swept value for a sweep).
#pragma once

#include <string>
#include <vector>

namespace backcomb::postprocess
{
  struct PvdDataSet
  {
    double      time; // the value ParaView shows as time
    std::string file; // path relative to the .pvd file
  };

  // The XML text of a collection.
  std::string pvd_text(const std::vector<PvdDataSet> &data_sets);

  // Writes the collection atomically (OutputError on failure).
  void write_pvd(const std::string &path, const std::vector<PvdDataSet> &data_sets);
} // namespace backcomb::postprocess
