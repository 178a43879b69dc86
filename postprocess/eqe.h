// The spectral response of a solved cell: external and internal quantum
// efficiency per wavelength of the optical model, from the collection
// probability map (EQE(l) = (1/Phi(l)) int q G_l f_c dA per footprint), as
// eqe.csv and a block of summary.json.
#pragma once

#include <nlohmann/json.hpp>

#include <optional>
#include <string>
#include <vector>

namespace backcomb::postprocess
{
  struct QuantumEfficiency
  {
    std::vector<double> wavelength_nm;
    std::vector<double> photon_flux; // incident, cm^-2 s^-1 nm^-1 (for the integral)
    std::vector<double> eqe;         // under the case's light at short circuit (differential)
    std::vector<double> absorbed, reflected, transmitted; // fractions of the incident photons
    std::optional<std::vector<double>> eqe_no_bias_light;  // linear response in the dark
    double bias_light_suns = 1;

    // q int EQE Phi dl, mA/cm^2 (of `eqe` or of the no-bias-light column).
    double integrated_current(bool no_bias_light = false) const;
  };

  // wavelength_nm, photon_energy_eV, EQE, [EQE_no_bias_light,] absorptance,
  // reflectance, transmittance, IQE = EQE / (1 - R - T), IQE_absorber =
  // EQE / absorptance; '#' lines state the definitions.
  std::string eqe_csv(const QuantumEfficiency &q);

  nlohmann::json eqe_json(const QuantumEfficiency &q, const std::string &file);
} // namespace backcomb::postprocess
