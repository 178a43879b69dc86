// Physical constants in SI units, CODATA 2018 (E. Tiesinga et al., "CODATA
// recommended values of the fundamental physical constants: 2018",
// Rev. Mod. Phys. 93 (2021) 025010). h, c, q and k_B are exact by the 2019
// SI definition; eps0 is the measured value.
#pragma once

namespace backcomb::constants
{
  constexpr double h    = 6.62607015e-34;   // J s
  constexpr double c    = 299792458.0;      // m/s
  constexpr double q    = 1.602176634e-19;  // C
  constexpr double k_B  = 1.380649e-23;     // J/K
  constexpr double eps0 = 8.8541878128e-12; // F/m
} // namespace backcomb::constants
