// libFuzzer target for the spectrum reader (fem::read_spectrum).
//
// A spectrum the reader accepts is also converted to the above-gap photon
// flux and photon current, as the generation model does, so that accepted
// but extreme values are exercised downstream. Contract: every input ends
// in a normal return or an InputError.
#include "fem/optics.h"
#include "base/entries.h"

#include <cstddef>
#include <cstdint>
#include <sstream>
#include <string>

extern "C" int
LLVMFuzzerTestOneInput(const std::uint8_t *data, std::size_t size)
{
  using namespace backcomb::fem;
  try
    {
      std::istringstream in(std::string(reinterpret_cast<const char *>(data), size));
      const Spectrum     spectrum = read_spectrum(in, "fuzz.csv");
      // A generic band gap of 1.6 eV (any positive value would do).
      const AboveGapSpectrum above = above_gap_spectrum(spectrum, 1.6);
      volatile double        sink  = photon_current_mA_per_cm2(above);
      (void)sink;
    }
  catch (const backcomb::InputError &)
    {
      // The documented reaction to bad input.
    }
  return 0;
}
