#include "base/files.h"

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <system_error>
#include <unistd.h>

namespace backcomb
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
      errno = 0;
      std::ofstream f(tmp, std::ios::binary | std::ios::trunc);
      if (!f)
        throw OutputError("cannot write '" + path + "' (opening '" + tmp + "' failed" +
                          (errno ? std::string(": ") + std::strerror(errno) : std::string()) + ")");
      f << text;
      f.flush();
      // close() reports what a network file system only finds out then.
      if (f)
        f.close();
      if (!f)
        {
          const int error = errno;
          f.close();
          std::remove(tmp.c_str());
          throw OutputError("cannot write '" + path + "' (" +
                            (error ? std::string(std::strerror(error)) : std::string("disk full or I/O error")) +
                            "); the previous version, if any, is unchanged");
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
} // namespace backcomb
