#include "postprocess/eqe.h"

#include "fem/constants.h"
#include "fem/optics.h"

#include <algorithm>
#include <iomanip>
#include <sstream>

namespace backcomb::postprocess
{
  double
  QuantumEfficiency::integrated_current(const bool no_bias_light) const
  {
    const std::vector<double> &e = no_bias_light ? *eqe_no_bias_light : eqe;
    std::vector<double>        y(e.size());
    for (std::size_t i = 0; i < e.size(); ++i)
      y[i] = e[i] * photon_flux[i];
    // q [C] times photons cm^-2 s^-1 is A/cm^2; 1e3 for mA.
    return 1e3 * constants::q * fem::integrate_trapezoid(wavelength_nm, y);
  }

  namespace
  {
    std::string
    ratio(const double a, const double b)
    {
      if (!(b > 0))
        return "";
      std::ostringstream s;
      s << std::setprecision(8) << a / b;
      return s.str();
    }
  } // namespace

  std::string
  eqe_csv(const QuantumEfficiency &q)
  {
    std::ostringstream csv;
    csv << std::setprecision(8);
    csv << "# backcomb spectral response at short circuit, above the absorber's band gap (below it: 0).\n"
        << "# EQE: collected electrons per incident photon of that wavelength, from the collection-probability map "
           "under the case's bias light ("
        << q.bias_light_suns
        << " suns): the differential EQE a lock-in measurement with that bias light gives.\n";
    if (q.eqe_no_bias_light)
      csv << "# EQE_no_bias_light: the same from the map of the cell in the dark at 0 V (linear response).\n";
    csv << "# absorptance, reflectance, transmittance: fractions of the incident photons absorbed in the absorber, "
           "reflected (front, and out of the front after the reflected pass) and transmitted (out of the far "
           "side); fingers and interlayers take the rest.\n"
        << "# IQE = EQE / (1 - reflectance - transmittance); IQE_absorber = EQE / absorptance. Empty where the "
           "denominator is 0.\n"
        << "wavelength_nm,photon_energy_eV,EQE," << (q.eqe_no_bias_light ? "EQE_no_bias_light," : "")
        << "absorptance,reflectance,transmittance,IQE,IQE_absorber\n";
    for (std::size_t i = 0; i < q.wavelength_nm.size(); ++i)
      {
        csv << q.wavelength_nm[i] << ',' << fem::photon_energy_eV(q.wavelength_nm[i]) << ',' << q.eqe[i] << ',';
        if (q.eqe_no_bias_light)
          csv << (*q.eqe_no_bias_light)[i] << ',';
        csv << q.absorbed[i] << ',' << q.reflected[i] << ',' << q.transmitted[i] << ','
            << ratio(q.eqe[i], 1 - q.reflected[i] - q.transmitted[i]) << ',' << ratio(q.eqe[i], q.absorbed[i])
            << '\n';
      }
    return csv.str();
  }

  nlohmann::json
  eqe_json(const QuantumEfficiency &q, const std::string &file)
  {
    nlohmann::json j;
    j["file"]            = file;
    j["bias_V"]          = 0.0;
    j["bias_light_suns"] = q.bias_light_suns;
    j["integrated_current_mA_per_cm2"] = q.integrated_current();
    const auto peak = std::max_element(q.eqe.begin(), q.eqe.end());
    j["peak_EQE"]          = peak == q.eqe.end() ? nlohmann::json(nullptr) : nlohmann::json(*peak);
    j["peak_wavelength_nm"] = peak == q.eqe.end() ? nlohmann::json(nullptr)
                                                  : nlohmann::json(q.wavelength_nm[peak - q.eqe.begin()]);
    j["integrated_current_no_bias_light_mA_per_cm2"] =
      q.eqe_no_bias_light ? nlohmann::json(q.integrated_current(true)) : nlohmann::json(nullptr);
    return j;
  }
} // namespace backcomb::postprocess
