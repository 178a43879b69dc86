#include "postprocess/pvd.h"

#include "base/files.h"
#include "base/format.h"

namespace backcomb::postprocess
{
  std::string
  pvd_text(const std::vector<PvdDataSet> &data_sets)
  {
    std::string text = "<?xml version=\"1.0\"?>\n<VTKFile type=\"Collection\" version=\"0.1\">\n<Collection>\n";
    for (const auto &d : data_sets)
      text += "<DataSet timestep=\"" + format_number(d.time, 12) + "\" file=\"" + d.file + "\"/>\n";
    return text + "</Collection>\n</VTKFile>\n";
  }

  void
  write_pvd(const std::string &path, const std::vector<PvdDataSet> &data_sets)
  {
    write_file_atomically(path, pvd_text(data_sets));
  }
} // namespace backcomb::postprocess
