// The absorber's photon recycling from the case: its emission spectrum by
// the van Roosbroeck-Shockley relation from the optical constants of the
// section "Illumination" (fem/radiative_emission.h), B from it when the
// case asks, and the photon-transport operator the solver applies to the
// absorber's columns (fem/photon_transport.h, fem/recycling_operator.h).
#pragma once

#include "fem/photon_transport.h"
#include "fem/recycling_operator.h"
#include "simulator/case_file.h"

namespace backcomb::simulator
{
  // The absorber's internal emission spectrum at the device temperature,
  // with the entries Emission cut-off (0: the band gap) and Urbach energy;
  // InputError naming the file or entry when the data do not allow it.
  fem::EmissionSpectrum
  absorber_emission(const Case &c);

  // The film as its photons see it: thickness, substrate and top indices.
  fem::FilmOptics
  absorber_film(const Case &c);

  // When Photon recycling = transport or Coefficient from absorption =
  // true need the emission spectrum: computes it once (so that bad data are
  // refused while the case is read, before anything is written) and, with
  // Coefficient from absorption, replaces the absorber's B by the van
  // Roosbroeck-Shockley value (read_case calls it).
  void
  prepare_absorber_emission(Case &c);

  // The operator factory when the absorber's Photon recycling is
  // transport; empty (the local model) otherwise.
  fem::RecyclingFactory
  recycling_factory(const Case &c);
} // namespace backcomb::simulator
