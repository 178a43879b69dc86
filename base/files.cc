#include "base/files.h"

#include <cerrno>
#include <fcntl.h>
#include <sys/file.h>
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

  FolderLock::FolderLock(const std::string &folder)
  {
    const std::string file = folder + "/" + file_name();
    fd                     = ::open(file.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
    if (fd < 0)
      {
        const int error = errno;
        throw OutputError("cannot write into the output folder '" + folder + "' (creating '" + file_name() +
                          "' there failed: " + std::strerror(error) + ")" +
                          (error == EACCES || error == EPERM || error == EROFS
                             ? "; fix the folder's permissions or choose another one with --out"
                             : ""));
      }
    if (::flock(fd, LOCK_EX | LOCK_NB) != 0)
      {
        const int   error = errno;
        char        owner[200] = "";
        const auto  n          = ::pread(fd, owner, sizeof owner - 1, 0);
        std::string who        = n > 0 ? std::string(owner, std::size_t(n)) : std::string();
        while (!who.empty() && (who.back() == '\n' || who.back() == ' '))
          who.pop_back();
        ::close(fd);
        fd = -1;
        if (error == EWOULDBLOCK)
          throw InputError("--out", folder,
                           "is in use by another backcomb run" + (who.empty() ? std::string() : " (" + who + ")") +
                             "; wait for it to finish or choose another folder (two runs into one folder "
                             "would mix their results)");
        throw OutputError("cannot lock the output folder '" + folder + "': " + std::strerror(error));
      }
    char host[64] = "";
    ::gethostname(host, sizeof host - 1);
    const std::string who = std::string("process ") + std::to_string(::getpid()) + " on " + host + "\n";
    if (::ftruncate(fd, 0) != 0 || ::pwrite(fd, who.data(), who.size(), 0) < 0)
      {
        // The lock holds without the note; the owner is only for messages.
      }
  }

  FolderLock::~FolderLock()
  {
    if (fd >= 0)
      ::close(fd); // releases the lock; the file stays (removing it would race)
  }
} // namespace backcomb
