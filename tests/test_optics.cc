// Tests of the optical generation: reference-spectrum integrals, analytic
// Beer-Lambert profiles, the Generation class and the data-file readers.
#include "fem/constants.h"
#include "fem/optics.h"
#include "base/entries.h"
#include "tests/input_error.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <string>
#include <tuple>
#include <vector>

#include <unistd.h>

namespace fs = std::filesystem;
using backcomb::test_support::input_error_message;
using namespace backcomb;
using namespace backcomb::fem;

namespace
{
  const fs::path data_dir = BACKCOMB_DATA_DIR;
  const fs::path am15g    = data_dir / "astm-g173-03.csv";
  const fs::path mapi_nk  = data_dir / "absorber-nk-mapi.yml";

  // A private folder for the data files written by the tests.
  class OpticsFiles : public ::testing::Test
  {
  protected:
    void
    SetUp() override
    {
      folder = fs::temp_directory_path() /
               ("backcomb-test-optics-" + std::to_string(::getpid()));
      fs::create_directories(folder);
    }
    void
    TearDown() override
    {
      fs::remove_all(folder);
    }
    fs::path
    write(const std::string &name, const std::string &text) const
    {
      const fs::path path = folder / name;
      std::ofstream(path) << text;
      return path;
    }
    // A wavelength-independent absorption coefficient over 200-5000 nm.
    fs::path
    constant_alpha(const double alpha_per_cm) const
    {
      std::string text = "# constant absorption\nwavelength_nm,alpha_per_cm\n";
      for (int w = 200; w <= 5000; w += 100)
        text += std::to_string(w) + "," + std::to_string(alpha_per_cm) + "\n";
      return write("alpha.csv", text);
    }
    fs::path folder;
  };

  IlluminationParameters
  spectrum_parameters(const fs::path &constants_file)
  {
    IlluminationParameters p;
    p.optical_constants_file = constants_file;
    return p;
  }

  constexpr FingerLayout no_fingers{0, 0, 0, false};
} // namespace

// ---------------------------------------------------------- spectrum data

TEST(Spectrum, GlobalTiltIntegralMatchesStandard)
{
  const Spectrum s = read_spectrum(am15g);
  EXPECT_EQ(s.wavelength_nm.size(), 2002u);
  // ASTM G173-03 states 1000.4 W/m^2 for the global-tilt spectrum.
  EXPECT_NEAR(integrate_trapezoid(s.wavelength_nm, s.irradiance),
              1000.4,
              1e-3 * 1000.4);
}

TEST(Spectrum, PhotonCurrentAboveGap)
{
  const Spectrum s = read_spectrum(am15g);
  // Reference values computed independently from the same table with CODATA
  // 2018 h, c, q (trapezoidal rule over the grid points with h c / lambda
  // >= E_g): 25.40 mA/cm^2 above 1.60 eV and 35.02 mA/cm^2 above 1.34 eV.
  EXPECT_NEAR(photon_current_mA_per_cm2(above_gap_spectrum(s, 1.60)),
              25.40,
              0.05);
  EXPECT_NEAR(photon_current_mA_per_cm2(above_gap_spectrum(s, 1.34)),
              35.02,
              0.05);
}

TEST(Spectrum, PhotonEnergy)
{
  // Analytic: h c / q = 1239.84198 eV nm (CODATA 2018, exact constants).
  EXPECT_NEAR(photon_energy_eV(1239.84198), 1.0, 1e-8);
}

// ----------------------------------------------------------- Beer-Lambert

TEST_F(OpticsFiles, SinglePassMatchesBeerLambert)
{
  const double alpha = 2e4; // cm^-1
  const double t     = 0.8; // um
  const auto   above = above_gap_spectrum(read_spectrum(am15g),
                                        read_optical_constants(constant_alpha(alpha)),
                                        1.6);
  const double flux_total =
    integrate_trapezoid(above.wavelength_nm, above.photon_flux);
  const BeerLambert optics{t, 1, 0, 0};
  for (const double d : {0., 0.1, 0.4, 0.8})
    {
      // Analytic: with constant alpha, G(d) = Phi_tot alpha exp(-alpha d).
      const double expected = flux_total * alpha * std::exp(-alpha * d * 1e-4);
      EXPECT_NEAR(beer_lambert_generation(above, optics, d) / expected,
                  1.0,
                  1e-6);
    }
  // Analytic: the absorbed fraction of a single pass is 1 - exp(-alpha t).
  EXPECT_NEAR(beer_lambert_absorbed_current(above, optics) /
                photon_current_mA_per_cm2(above),
              1 - std::exp(-alpha * t * 1e-4),
              1e-9);
}

TEST_F(OpticsFiles, DoublePassAddsReflectedBeam)
{
  const double alpha = 2e4, t = 0.8, r_back = 0.7;
  const auto   above = above_gap_spectrum(read_spectrum(am15g),
                                        read_optical_constants(constant_alpha(alpha)),
                                        1.6);
  const double flux_total =
    integrate_trapezoid(above.wavelength_nm, above.photon_flux);
  const BeerLambert optics{t, 1, 0, r_back};
  const double      a = alpha * 1e-4; // per um
  for (const double d : {0., 0.3, 0.8})
    {
      // Analytic: the reflected beam has travelled 2t - d when it is at d.
      const double expected =
        flux_total * alpha *
        (std::exp(-a * d) + r_back * std::exp(-a * (2 * t - d)));
      EXPECT_NEAR(beer_lambert_generation(above, optics, d) / expected,
                  1.0,
                  1e-6);
    }
  // Analytic: (1 - e^{-a t}) on the way in plus R_b e^{-a t}(1 - e^{-a t}).
  const double transmitted = std::exp(-a * t);
  EXPECT_NEAR(beer_lambert_absorbed_current(above, optics) /
                photon_current_mA_per_cm2(above),
              (1 - transmitted) * (1 + r_back * transmitted),
              1e-9);
}

TEST_F(OpticsFiles, IntensityAndFrontReflectanceScale)
{
  const double alpha = 1e4, t = 0.5;
  auto p = spectrum_parameters(constant_alpha(alpha));
  const Generation one_sun(p, 1.6, t, no_fingers);
  p.intensity_suns    = 2;
  p.front_reflectance = 0.1;
  const Generation scaled(p, 1.6, t, no_fingers);
  // Analytic: G scales with S (1 - R_f) = 1.8.
  EXPECT_NEAR(scaled.rate_at_depth(0.2) / one_sun.rate_at_depth(0.2), 1.8, 1e-12);
  EXPECT_NEAR(scaled.absorbed_current_mA_per_cm2() /
                one_sun.absorbed_current_mA_per_cm2(),
              1.8,
              1e-12);
  // The upper bound ignores reflectance: it scales with S only.
  EXPECT_NEAR(*scaled.photon_current_above_gap_mA_per_cm2() /
                *one_sun.photon_current_above_gap_mA_per_cm2(),
              2.0,
              1e-12);
  p.intensity_suns = 0;
  EXPECT_EQ(Generation(p, 1.6, t, no_fingers).rate(0, 0.3), 0.0);
}

TEST(BeerLambert, ThickAbsorberAbsorbsNearlyAll)
{
  // The n,k data of L. J. Phillips et al., Data in Brief 5 (2015) 926, give
  // alpha = 4 pi k / lambda >= 1.2e4 cm^-1 everywhere between 300 nm and the
  // 1.60 eV edge, so a 10 um film absorbs at least 1 - exp(-12) of every
  // covered wavelength (Beer-Lambert, analytic); the bound checked is 98 %.
  const Generation g(spectrum_parameters(mapi_nk), 1.60, 10.0, no_fingers);
  std::cout << "absorbed fraction, 10 um: "
            << g.absorbed_current_mA_per_cm2() /
                 *g.photon_current_above_gap_mA_per_cm2()
            << "\n";
  EXPECT_GE(g.absorbed_current_mA_per_cm2(),
            0.98 * *g.photon_current_above_gap_mA_per_cm2());
  EXPECT_LE(g.absorbed_current_mA_per_cm2(),
            *g.photon_current_above_gap_mA_per_cm2());
}

// The thin-film absorptance of the whole optical model (Generation: depth
// grid, interpolation, quadrature) for a wavelength-independent absorption
// coefficient equals the analytic Beer-Lambert values A = 1 - exp(-alpha t)
// for a single pass and, with a perfect back mirror, A = 1 - exp(-2 alpha
// t) (incoherent double pass; A. Beer, Ann. Phys. Chem. 86 (1852) 78; e.g.
// M. A. Green, Solar Cells, 1982, sec. 5.2), for thin and thick films.
TEST_F(OpticsFiles, ThinFilmAbsorptanceIsBeerLambert)
{
  const double alpha = 1.5e4; // cm^-1
  for (const double t : {0.1, 0.4, 2.0})
    {
      auto p = spectrum_parameters(constant_alpha(alpha));
      const Generation single(p, 1.6, t, no_fingers);
      p.back_reflectance = 1;
      const Generation mirrored(p, 1.6, t, no_fingers);
      const double     bound = *single.photon_current_above_gap_mA_per_cm2();
      const double     a_t   = alpha * t * 1e-4;
      std::printf("t = %.1f um: absorptance %.6f (analytic %.6f), with mirror %.6f (analytic %.6f)\n", t,
                  single.absorbed_current_mA_per_cm2() / bound, 1 - std::exp(-a_t),
                  mirrored.absorbed_current_mA_per_cm2() / bound, 1 - std::exp(-2 * a_t));
      EXPECT_NEAR(single.absorbed_current_mA_per_cm2() / bound, 1 - std::exp(-a_t), 1e-4 * (1 - std::exp(-a_t)));
      EXPECT_NEAR(mirrored.absorbed_current_mA_per_cm2() / bound, 1 - std::exp(-2 * a_t),
                  1e-4 * (1 - std::exp(-2 * a_t)));
    }
}

TEST(Generation, InterpolatedProfileIsAccurate)
{
  // The precomputed profile against direct evaluation: within 1e-4 relative
  // (the bound derived in optics.cc) for thin and thick films, both passes.
  const auto above =
    above_gap_spectrum(read_spectrum(am15g), read_optical_constants(mapi_nk), 1.6);
  for (const double t : {0.4, 10.0})
    for (const double r_back : {0.0, 1.0})
      {
        auto p             = spectrum_parameters(mapi_nk);
        p.back_reflectance = r_back;
        const Generation  g(p, 1.6, t, no_fingers);
        const BeerLambert optics{t, 1, 0, r_back};
        for (int i = 0; i <= 97; ++i)
          {
            const double d     = t * i / 97.0;
            const double exact = beer_lambert_generation(above, optics, d);
            EXPECT_NEAR(g.rate_at_depth(d) / exact, 1.0, 1e-4)
              << "t = " << t << " d = " << d;
          }
      }
}

TEST_F(OpticsFiles, IlluminatedSideAndFingerShadow)
{
  const double alpha = 3e4, t = 0.5;
  auto         p = spectrum_parameters(constant_alpha(alpha));
  // Electron finger half-width 2 um, gap 10 um, hole finger half-width 3 um.
  const FingerLayout layout{2, 10, 3, true};

  const Generation film(p, 1.6, t, layout);
  // Film side: depth = t - y, no shadow anywhere.
  EXPECT_DOUBLE_EQ(film.rate(1.0, t), film.rate_at_depth(0));
  EXPECT_DOUBLE_EQ(film.rate(1.0, 0.1), film.rate(6.0, 0.1));
  EXPECT_NEAR(film.rate(6.0, 0.1), film.rate_at_depth(0.4), 1e-9 * film.rate_at_depth(0.4));
  EXPECT_EQ(film.period_average_transmittance(), 1.0);

  p.side                 = IlluminationParameters::Side::substrate;
  p.finger_transmittance = 0.6;
  const Generation sub(p, 1.6, t, layout);
  // Substrate side: depth = y; over a finger the transmittance applies.
  EXPECT_NEAR(sub.rate(6.0, 0.1), sub.rate_at_depth(0.1), 1e-9 * sub.rate_at_depth(0.1));
  EXPECT_NEAR(sub.rate(1.0, 0.1), 0.6 * sub.rate(6.0, 0.1), 1e-9 * sub.rate(6.0, 0.1));
  EXPECT_NEAR(sub.rate(13.0, 0.1), 0.6 * sub.rate(6.0, 0.1), 1e-9 * sub.rate(6.0, 0.1));
  // Analytic: (0.6 (2 + 3) + 10) / 15.
  EXPECT_NEAR(sub.period_average_transmittance(), 13.0 / 15.0, 1e-15);

  // The verification strip has no fingers: no shadow.
  const Generation strip(p, 1.6, t, no_fingers);
  EXPECT_DOUBLE_EQ(strip.rate(1.0, 0.1), strip.rate(6.0, 0.1));
}

// Interlayers on the fingers lie below the absorber: lit through the
// substrate, the absorber's depth over a finger starts at the interlayer's
// top, and the light reaching it is what the finger transmits and the
// interlayer does not absorb (Beer-Lambert across the interlayer); lit from
// the film side, the column over a finger is the absorber above the
// interlayer, with the same profile as the gap's (single pass).
TEST_F(OpticsFiles, InterlayerColumns)
{
  const double t = 0.5, d_e = 0.02, d_h = 0.03;
  auto         p = spectrum_parameters(constant_alpha(3e4));
  p.electron_interlayer_alpha_per_cm = 1e5;
  p.hole_interlayer_alpha_per_cm     = 2e5;
  FingerLayout layout{2, 10, 3, true};
  layout.electron_interlayer_um = d_e;
  layout.hole_interlayer_um     = d_h;

  // Each column interpolates its own depth table: 1e-4 relative (the
  // interpolation bound of InterpolatedProfileIsAccurate).
  const Generation film(p, 1.6, t, layout);
  for (const double y : {0.05, 0.2, 0.45})
    {
      EXPECT_NEAR(film.rate(1.0, y), film.rate(6.0, y), 1e-4 * film.rate(6.0, y)) << y;
      EXPECT_NEAR(film.rate(13.0, y), film.rate(6.0, y), 1e-4 * film.rate(6.0, y)) << y;
    }

  p.side                 = IlluminationParameters::Side::substrate;
  p.finger_transmittance = 0.7;
  const Generation sub(p, 1.6, t, layout);
  const double     A_e = 1 - std::exp(-1e5 * 1e-4 * d_e), A_h = 1 - std::exp(-2e5 * 1e-4 * d_h);
  for (const double d : {0.0, 0.1, 0.3})
    {
      const double gap = sub.rate(6.0, d);
      EXPECT_NEAR(sub.rate(1.0, d_e + d), 0.7 * (1 - A_e) * gap, 1e-4 * gap) << d;
      EXPECT_NEAR(sub.rate(13.0, d_h + d), 0.7 * (1 - A_h) * gap, 1e-4 * gap) << d;
    }
}

// Every photon of the spectrum is booked: each term of the optical budget is
// computed on its own, and they add up to the incident power to 1e-9
// relative, for both illuminated sides, with interlayers, fingers, front and
// back reflectance. Terms with a closed form are checked against it, and the
// absorbed photon current against an independent quadrature of G(x, y) over
// the absorber of the period. Incident power: ASTM G173-03 global tilt,
// 1000.4 W/m^2 (the standard's stated integral).
TEST(OpticalBudget, BooksEveryPhoton)
{
  const double t = 0.4, d_e = 0.02, d_h = 0.05, R_f = 0.05, R_b = 0.3, T_f = 0.8;
  const double a_e = 2e5, a_h = 5e4; // cm^-1
  FingerLayout layout{2.5, 5, 2.5, true};
  layout.electron_interlayer_um = d_e;
  layout.hole_interlayer_um     = d_h;
  const double period = 10;
  for (const auto side : {IlluminationParameters::Side::film, IlluminationParameters::Side::substrate})
    {
      auto p                             = spectrum_parameters(mapi_nk);
      p.side                             = side;
      p.front_reflectance                = R_f;
      p.back_reflectance                 = R_b;
      p.finger_transmittance             = T_f;
      p.electron_interlayer_alpha_per_cm = a_e;
      p.hole_interlayer_alpha_per_cm     = a_h;
      const Generation g(p, 1.6, t, layout);
      const auto       b = g.optical_budget();
      ASSERT_TRUE(b.has_value());
      const bool from_substrate = side == IlluminationParameters::Side::substrate;
      std::printf("%s side: incident %.6f, reflected %.6f, fingers %.6f, interlayers %.6f, absorbed %.6f, "
                  "below gap %.6f, passed through %.6f mW/cm2; unbooked %.2e\n",
                  from_substrate ? "substrate" : "film", b->incident, b->reflected, b->shaded, b->parasitic,
                  b->absorbed, b->below_gap, b->passed_through, b->unbooked());
      EXPECT_NEAR(b->incident, 100.04, 0.1);
      EXPECT_LT(std::abs(b->unbooked()), 1e-9 * b->incident);
      EXPECT_NEAR(b->reflected, R_f * b->incident, 1e-12 * b->incident);
      for (const double term : {b->shaded, b->parasitic, b->absorbed, b->below_gap, b->passed_through})
        EXPECT_GT(term, 0);
      if (from_substrate)
        {
          // Closed forms: the fingers stop (1 - T_f) of what passes the
          // front, the interlayers absorb 1 - exp(-alpha d) of what the
          // fingers let through.
          const double front = (1 - R_f) * b->incident;
          EXPECT_NEAR(b->shaded, front * (1 - T_f) * 5 / period, 1e-12 * front);
          const double A_e = 1 - std::exp(-a_e * 1e-4 * d_e), A_h = 1 - std::exp(-a_h * 1e-4 * d_h);
          EXPECT_NEAR(b->parasitic, front * T_f * 2.5 * (A_e + A_h) / period, 1e-12 * front);
        }
      // q int G dA per period width, by the composite Simpson rule on a
      // fine grid within each column's absorber.
      double total = 0;
      for (const auto &[x0, x1, bottom] : std::vector<std::tuple<double, double, double>>{
             {0, 2.5, d_e}, {2.5, 7.5, 0.0}, {7.5, 10, d_h}})
        {
          const int n = 4000;
          double    column = 0;
          for (int k = 0; k <= n; ++k)
            {
              const double y = bottom + (t - bottom) * k / n;
              const double w = (k == 0 || k == n) ? 1 : (k % 2 ? 4 : 2);
              column += w * g.rate(0.5 * (x0 + x1), y);
            }
          total += column * (t - bottom) / (3 * n) * (x1 - x0);
        }
      // cm^-3 s^-1 um -> q * cm^-2 s^-1 (1e-4), A -> mA (1e3).
      const double quadrature = 1e3 * constants::q * 1e-4 * total / period;
      EXPECT_NEAR(quadrature / b->absorbed_current, 1.0, 2e-4);
      EXPECT_LE(b->absorbed_current, *g.photon_current_above_gap_mA_per_cm2());
    }
}

TEST(Generation, UniformModel)
{
  IlluminationParameters p;
  p.model                  = "uniform";
  p.uniform_rate_per_cm3_s = 2e21;
  p.intensity_suns         = 0.5;
  const Generation g(p, 1.6, 0.4, no_fingers);
  EXPECT_DOUBLE_EQ(g.rate(3, 0.2), 1e21);
  // Analytic: q G t = 1.602e-19 C * 1e21 cm^-3 s^-1 * 0.4e-4 cm = 6.41 mA/cm^2.
  EXPECT_NEAR(g.absorbed_current_mA_per_cm2(),
              1e3 * constants::q * 1e21 * 0.4e-4,
              1e-12);
  EXPECT_FALSE(g.photon_current_above_gap_mA_per_cm2().has_value());
}

TEST_F(OpticsFiles, DepthTableModel)
{
  IlluminationParameters p;
  p.model = "depth table";
  p.depth_table_file =
    write("g.csv",
          "# linear profile\ndepth_nm,generation_per_cm3_s\n0,4e21\n"
          "200,2e21\n1000,0\n");
  const Generation g(p, 1.6, 0.4, no_fingers);
  // Analytic: linear interpolation between the rows.
  EXPECT_NEAR(g.rate_at_depth(0.1), 3e21, 1e6);
  EXPECT_NEAR(g.rate(0, 0.1), 2e21 - 0.1 / 0.8 * 2e21, 1e6); // depth 0.3 um
  // Analytic: q (trapezoids 0-200 nm and 200-400 nm) = q (6e21*0.1 + 3.5e21*0.1) 1e-4.
  EXPECT_NEAR(g.absorbed_current_mA_per_cm2(),
              1e3 * constants::q * (0.6e21 + 0.35e21) * 1e-4,
              1e-12);

  // A table shorter than the absorber is rejected.
  EXPECT_NE(input_error_message([&] { Generation(p, 1.6, 1.5, no_fingers); })
              .find("g.csv"),
            std::string::npos);
}

// ---------------------------------------------------------------- readers

TEST(Readers, RealOpticalConstants)
{
  const auto c = read_optical_constants(mapi_nk);
  EXPECT_EQ(c.kind, OpticalConstants::Kind::nk);
  EXPECT_NEAR(c.wavelength_nm.front(), 300.009583, 1e-6);
  EXPECT_NEAR(c.wavelength_nm.back(), 1501.320923, 1e-6);
  // Analytic: alpha = 4 pi k / lambda at the first row (k = 0.559247).
  EXPECT_NEAR(absorption_coefficient(c, 300.009583),
              4 * 3.14159265358979323846 * 0.559247 / 300.009583e-7,
              1e-6);
}

TEST_F(OpticsFiles, OpticalConstantsErrors)
{
  const std::string yaml_head =
    "# test\nDATA:\n  - type: tabulated nk\n    data: |\n";
  const auto expect = [&](const fs::path &path, const std::string &fragment) {
    const std::string m =
      input_error_message([&] { read_optical_constants(path); });
    EXPECT_NE(m.find(path.string()), std::string::npos) << m;
    EXPECT_NE(m.find(fragment), std::string::npos) << m;
  };
  expect(write("unsorted.yml",
               yaml_head + "        0.4 2.0 0.1\n        0.3 2.0 0.1\n"),
         ":6");
  expect(write("negative-k.yml",
               yaml_head + "        0.3 2.0 0.1\n        0.4 2.0 -0.1\n"),
         ":6 = 0.4 2.0 -0.1: k must be >= 0");
  expect(write("zero-n.yml",
               yaml_head + "        0.3 0 0.1\n        0.4 2.0 0.1\n"),
         ":5");
  expect(write("truncated.yml",
               yaml_head + "        0.3 2.0 0.1\n        0.4 2.0\n"),
         ":6 = 0.4 2.0: missing column");
  expect(write("not-number.yml",
               yaml_head + "        0.3 2.0 0.1\n        0.4 2.O 0.1\n"),
         "'2.O' is not a number");
  expect(write("nan.yml", yaml_head + "        0.3 2.0 0.1\n        0.4 nan 0.1\n"),
         "not a finite number");
  expect(write("formula.yml", "DATA:\n  - type: formula 2\n"),
         "tabulated nk");
  expect(write("alpha-negative.csv",
               "wavelength_nm,alpha_per_cm\n300,1e5\n400,-1\n"),
         ":3");
  expect(write("alpha-truncated.csv",
               "wavelength_nm,alpha_per_cm\n300,1e5\n400,\n"),
         "missing column");
  expect(write("alpha-no-header.csv", "300,1e5\n400,1e4\n"), "header");
  expect(write("alpha-one-row.csv", "wavelength_nm,alpha_per_cm\n300,1e5\n"),
         "at least 2");
  expect(folder / "missing.yml", "cannot open");
}

TEST_F(OpticsFiles, SpectrumErrors)
{
  const auto expect = [&](const fs::path &path, const std::string &fragment) {
    const std::string m = input_error_message([&] { read_spectrum(path); });
    EXPECT_NE(m.find(path.string()), std::string::npos) << m;
    EXPECT_NE(m.find(fragment), std::string::npos) << m;
  };
  const std::string head = "title,,,\nwavelength,extra,global,direct\n";
  expect(write("s-unsorted.csv", head + "300,1,1,1\n300,1,1,1\n"),
         ":4 = 300,1,1,1: wavelength 300 is not greater");
  expect(write("s-negative.csv", head + "300,1,1,1\n301,1,-1,1\n"),
         ":4 = 301,1,-1,1: irradiance must be >= 0");
  expect(write("s-truncated.csv", head + "300,1,1,1\n301,1,1\n"),
         ":4 = 301,1,1: missing column");
  expect(write("s-word.csv", head + "300,1,1,1\n301,1,x,1\n"), "'x' is not a number");
  expect(write("s-inf.csv", head + "300,1,1,1\n301,1,inf,1\n"), "finite");
  expect(write("s-short.csv", head + "300,1,1,1\n"), "at least 2");
  expect(folder / "missing.csv", "cannot open");

  // Two-column spectra use their second column.
  const auto s = read_spectrum(write("two.csv", "wavelength_nm,W/m2/nm\n500,2\n600,3\n"));
  EXPECT_EQ(s.irradiance.back(), 3.0);
}

TEST_F(OpticsFiles, CoverageErrors)
{
  // A table 500-900 nm cannot serve a 1.6 eV absorber (needs about
  // 300-774 nm of the reference spectrum).
  const auto narrow = write("narrow.csv",
                            "wavelength_nm,alpha_per_cm\n500,1e4\n900,1e4\n");
  const std::string m = input_error_message([&] {
    above_gap_spectrum(read_spectrum(am15g), read_optical_constants(narrow), 1.6);
  });
  EXPECT_NE(m.find("narrow.csv = 500-900 nm"), std::string::npos) << m;
  EXPECT_NE(m.find("-774 nm is needed"), std::string::npos) << m;

  // The real table ends at 1501 nm: a 0.7 eV gap needs beyond it.
  const std::string m2 = input_error_message(
    [&] { Generation(spectrum_parameters(mapi_nk), 0.7, 1.0, no_fingers); });
  EXPECT_NE(m2.find("absorber-nk-mapi.yml"), std::string::npos) << m2;
}

// -------------------------------------------------------------- case file

TEST_F(OpticsFiles, ParametersParseAndResolve)
{
  dealii::ParameterHandler prm;
  IlluminationParameters::declare_parameters(prm);
  prm.parse_input_from_string("subsection Illumination\n"
                              "  set Generation model = depth table\n"
                              "  set Depth table file = tables/g.csv\n"
                              "  set Optical constants file = /abs/alpha.csv\n"
                              "  set Intensity = 0.5\n"
                              "  set Illuminated side = substrate\n"
                              "  set Back reflectance = 1\n"
                              "end\n");
  IlluminationParameters p;
  p.parse_parameters(prm, "/cases/demo");
  EXPECT_EQ(p.model, "depth table");
  EXPECT_EQ(p.depth_table_file, fs::path("/cases/demo/tables/g.csv"));
  EXPECT_EQ(p.optical_constants_file, fs::path("/abs/alpha.csv"));
  EXPECT_EQ(p.spectrum_file, data_dir / "astm-g173-03.csv");
  EXPECT_EQ(p.side, IlluminationParameters::Side::substrate);
  EXPECT_EQ(p.intensity_suns, 0.5);
  EXPECT_EQ(p.back_reflectance, 1.0);
  EXPECT_EQ(p.finger_transmittance, 0.85);

  const auto rejects = [&](const std::string &entry,
                           const std::string &value,
                           const std::string &path) {
    dealii::ParameterHandler bad;
    IlluminationParameters::declare_parameters(bad);
    bad.parse_input_from_string("subsection Illumination\n  set " + entry +
                                " = " + value + "\nend\n");
    IlluminationParameters q;
    const std::string m = input_error_message([&] { q.parse_parameters(bad); });
    EXPECT_NE(m.find(path), std::string::npos) << m;
  };
  rejects("Intensity", "-1", "Illumination/Intensity = -1");
  rejects("Finger transmittance", "1.2", "Illumination/Finger transmittance = 1.2");
  rejects("Front reflectance", "abc", "Illumination/Front reflectance = abc");
  rejects("Generation model", "depth table", "Illumination/Depth table file");
}
