// A fresh, empty folder under the system's temporary directory, named after
// the test and the process (tests running in parallel do not collide).
#pragma once

#include <filesystem>
#include <string>
#include <unistd.h>

namespace backcomb::test_support
{
  inline std::filesystem::path
  fresh_folder(const std::string &name)
  {
    namespace fs     = std::filesystem;
    const fs::path p = fs::temp_directory_path() / ("backcomb-test-" + name + "-" + std::to_string(::getpid()));
    fs::remove_all(p);
    fs::create_directories(p);
    return p;
  }
} // namespace backcomb::test_support
