// libFuzzer target for the optical-constant reader
// (fem::read_optical_constants).
//
// The reader picks its format by the file extension, so every input is
// read twice: as the n,k YAML layout (".yml") and as the alpha table
// (".csv"). From a table the reader accepts, the absorption coefficient is
// evaluated at every tabulated wavelength and between neighbours, as the
// generation model does. Contract: every input ends in a normal return or
// an InputError.
#include "fem/optics.h"
#include "base/entries.h"

#include <cstddef>
#include <cstdint>
#include <sstream>
#include <string>

namespace
{
  void
  read_and_use(const std::string &text, const std::string &file)
  {
    using namespace backcomb::fem;
    try
      {
        std::istringstream     in(text);
        const OpticalConstants constants = read_optical_constants(in, file);
        const auto            &w         = constants.wavelength_nm;
        volatile double        sink      = 0;
        for (std::size_t i = 0; i < w.size(); ++i)
          {
            sink = sink + absorption_coefficient(constants, w[i]);
            if (i + 1 < w.size())
              sink = sink + absorption_coefficient(constants, 0.5 * (w[i] + w[i + 1]));
          }
      }
    catch (const backcomb::InputError &)
      {
        // The documented reaction to bad input.
      }
  }
} // namespace

extern "C" int
LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
  const std::string text(reinterpret_cast<const char *>(data), size);
  read_and_use(text, "fuzz.yml");
  read_and_use(text, "fuzz.csv");
  return 0;
}
