// A plain main for a libFuzzer target in the normal (gcc) build: runs
// LLVMFuzzerTestOneInput once on each file named on the command line, so
// that the target compiles with the project and its seed corpus is
// replayed by CTest without clang. Exit code 0 when every input returned.
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <iterator>
#include <string>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size);

int
main(int argc, char **argv)
{
  for (int i = 1; i < argc; ++i)
    {
      std::ifstream in(argv[i], std::ios::binary);
      if (!in)
        {
          std::fprintf(stderr, "replay: cannot read %s\n", argv[i]);
          return 1;
        }
      const std::string bytes((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
      LLVMFuzzerTestOneInput(reinterpret_cast<const std::uint8_t *>(bytes.data()), bytes.size());
    }
  std::printf("replayed %d inputs\n", argc - 1);
  return 0;
}
