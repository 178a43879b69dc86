#include "postprocess/output.h"

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <system_error>
#include <unistd.h>

namespace backcomb::postprocess
{
  void
  make_folder(const std::string &folder)
  {
    std::error_code ec;
    std::filesystem::create_directories(folder, ec);
    if (ec || !std::filesystem::is_directory(folder))
      throw OutputError("cannot create the output folder '" + folder + "': " +
                        (ec ? ec.message() : "not a folder"));
  }

  void
  write_file_atomically(const std::string &path, const std::string &text)
  {
    // Host name and process id keep two processes that write the same file
    // at once (array tasks writing a sweep plan, possibly on different
    // nodes of a shared file system) from sharing a temporary file.
    char host[64] = "";
    ::gethostname(host, sizeof host - 1);
    const std::string tmp = path + ".tmp." + host + "." + std::to_string(::getpid());
    {
      std::ofstream f(tmp, std::ios::binary | std::ios::trunc);
      if (!f)
        throw OutputError("cannot write '" + path + "' (opening '" + tmp + "' failed)");
      f << text;
      f.flush();
      if (!f)
        {
          f.close();
          std::remove(tmp.c_str());
          throw OutputError("cannot write '" + path + "' (disk full or I/O error)");
        }
    }
    std::error_code ec;
    std::filesystem::rename(tmp, path, ec);
    if (ec)
      {
        std::remove(tmp.c_str());
        throw OutputError("cannot rename '" + tmp + "' to '" + path + "': " + ec.message());
      }
  }
} // namespace backcomb::postprocess
