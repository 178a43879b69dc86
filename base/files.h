// Writing result files: every file goes to a temporary name in the target
// folder and is renamed into place, so a reader (or a killed run) sees
// either the previous complete file or the new complete file.
#pragma once

#include "base/errors.h"

#include <string>

namespace backcomb
{
  // Creates `folder` (and parents) or throws OutputError naming it.
  void make_folder(const std::string &folder);

  // Writes `text` to `path` atomically; OutputError on failure.
  void write_file_atomically(const std::string &path, const std::string &text);

  // An exclusive lock on a results folder while a run writes into it: the
  // file FOLDER/.backcomb-lock, locked with flock(2) (released by the
  // operating system when the process ends, however it ends) and holding
  // the host and process id of its owner for the message. A second run
  // into the same folder gets InputError naming the folder and the owner
  // (exit code 2) before it changes anything; a folder it cannot write
  // into gets OutputError saying so (exit code 4).
  class FolderLock
  {
  public:
    explicit FolderLock(const std::string &folder);
    ~FolderLock();
    FolderLock(const FolderLock &)            = delete;
    FolderLock &operator=(const FolderLock &) = delete;

    static std::string file_name() { return ".backcomb-lock"; }

  private:
    int fd = -1;
  };
} // namespace backcomb
