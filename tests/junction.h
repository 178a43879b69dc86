// Textbook test devices on strips (strip_mesh.h) shared by the verification
// tests: a generic crystalline semiconductor, ohmic contacts, a symmetric
// abrupt p-n junction with its ideal-diode saturation current, and a light
// J-V from short circuit to beyond open circuit.
#pragma once

#include "fem/constants.h"
#include "fem/drift_diffusion.h"
#include "fem/operating_points.h"
#include "tests/strip_mesh.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace backcomb::test_support
{
  inline fem::ContactParameters
  ohmic_contact()
  {
    fem::ContactParameters c;
    c.model = "ohmic";
    return c;
  }

  // A generic crystalline semiconductor for the textbook checks; the
  // numbers are round values of the order of the common ones, not a
  // particular material.
  inline fem::Material
  textbook_material()
  {
    fem::Material m;
    m.band_gap          = 0.8;
    m.electron_affinity = 4.0;
    m.permittivity      = 12.0;
    m.Nc = m.Nv = 2.5e19;
    m.mu_n = m.mu_p = 100.0;
    m.tau_n = m.tau_p = 1.0; // SRH switched off in effect
    return m;
  }

  // Symmetric abrupt p-n junction at 300 K: p side left (acceptors), n side
  // right, radiative recombination only; the strip's cells start at h_min
  // (um) at the junction and the contacts.
  struct Junction
  {
    double N = 1e18, B = 1e-10, L = 40.0, xj = 20.0, h_min = 0.002;
    static constexpr double T = 300.0;
    static double Vt() { return constants::k_B * T / constants::q; }
    fem::Material p_side() const
    {
      fem::Material m = textbook_material();
      m.band_gap      = 0.9; // keeps the currents small enough for negligible ohmic drop
      m.acceptors     = N;
      m.B_rad         = B;
      return m;
    }
    fem::Material n_side() const
    {
      fem::Material m = textbook_material();
      m.band_gap      = 0.9;
      m.donors        = N;
      m.B_rad         = B;
      return m;
    }
    // Graded strip, junction at xj.
    void mesh(dealii::Triangulation<2> &tria) const { make_strip(tria, L, 1.0, xj, h_min, 1.1, 0.5); }
    // Ohmic contacts whose work functions match each side's Fermi level.
    fem::ContactParameters p_contact() const
    {
      const fem::Material    m = p_side();
      fem::ContactParameters c = ohmic_contact();
      c.work_function          = m.electron_affinity + m.band_gap - Vt() * std::log(m.Nv / N);
      return c;
    }
    fem::ContactParameters n_contact() const
    {
      const fem::Material    m = n_side();
      fem::ContactParameters c = ohmic_contact();
      c.work_function          = m.electron_affinity + Vt() * std::log(m.Nc / N);
      return c;
    }
    // The dark diode with the p side at the hole contact, so that forward
    // bias is V > 0 (the strip mirrored: acceptors on the right).
    fem::DeviceModel dark_diode() const
    {
      namespace ids = backcomb::geometry::ids;
      return fem::DeviceModel(T, {{ids::absorber, n_side()}, {ids::absorber_right, p_side()}}, {}, n_contact(),
                              p_contact(), fem::SurfaceParameters(), fem::SurfaceParameters(), nullptr);
    }
    // Saturation current density of the ideal diode, mA/cm^2: J0 = q n_i^2
    // (D_n/(L_n N_A) + D_p/(L_p N_D)) (Sze & Ng, Physics of Semiconductor
    // Devices, 3rd ed., 2007, eq. 2.65 in sec. 2.4.2), here 2 q n_i^2 D /
    // (L_D N) with D from the Einstein relation and L_D = sqrt(D / (B N)).
    double saturation_current() const
    {
      const fem::Material mp  = p_side();
      const double        ni  = std::sqrt(mp.Nc * mp.Nv) * std::exp(-mp.band_gap / (2 * Vt()));
      const double        D   = mp.mu_n * Vt(); // cm^2/s
      const double        tau = 1.0 / (B * N); // s
      const double        Ld  = std::sqrt(D * tau); // cm
      return constants::q * ni * ni * 2 * D / (Ld * N) * 1e3;
    }
  };

  // Light J-V from 0 V in steps of dV until the current changes sign.
  inline std::vector<fem::JVPoint>
  light_jv(fem::DriftDiffusionSolver &solver, const double dV)
  {
    std::vector<fem::JVPoint> c;
    for (double V = 0;; V += dV)
      {
        const fem::StepReport s = fem::move_to(solver, V, 1.0, 8);
        EXPECT_TRUE(s.converged) << s.diagnostic;
        c.push_back({V, solver.terminal_current().total(), s.converged, s.newton_iterations});
        if (!s.converged || c.back().current < 0 || V > 3)
          break;
      }
    return c;
  }
} // namespace backcomb::test_support
