// The whole comb cell along the fingers (fem/comb_electrodes.h) and the
// suns-Voc series resistance, on J-V tables of an analytic one-diode cell.
#include "fem/comb_electrodes.h"
#include "fem/constants.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

using namespace backcomb;
using namespace backcomb::fem;

namespace
{
  // One-diode cell J = Jsc - J0 (exp(Vj / (n Vt)) - 1) behind a lumped
  // series resistance, V = Vj - J Rs: explicit in the junction voltage Vj.
  // Currents in mA/cm^2, Rs in ohm cm^2.
  struct OneDiode
  {
    double Jsc = 20, J0 = 1e-9, n = 1;
    double Vt  = constants::k_B * 300 / constants::q;

    double current(const double vj) const { return Jsc - J0 * (std::exp(vj / (n * Vt)) - 1); }
    double voc(const double suns) const { return n * Vt * std::log(suns * Jsc / J0 + 1); }

    // The light J-V behind `rs`, for junction voltages from `from` to `to`.
    std::vector<JVPoint>
    table(const double rs, const double from = -0.1, const double to = 0.66,
          const double step = 0.002) const
    {
      std::vector<JVPoint> t;
      for (double vj = from; vj <= to + 1e-12; vj += step)
        {
          const double J = current(vj);
          t.push_back({vj - J * 1e-3 * rs, J, true, 0});
        }
      return t;
    }
  };

  // One period: 10 um fingers, 20 um gaps, pitch 60 um.
  const CombWidths widths{10, 10, 60};
  constexpr double cm_per_um = 1e-4;

  std::vector<SunsVocPoint>
  suns_voc(const OneDiode &cell)
  {
    std::vector<SunsVocPoint> out;
    for (const double s : {1e-3, 2e-3, 5e-3, 1e-2, 2e-2, 5e-2, 0.1, 0.2, 0.5, 1.0, 2.0})
      out.push_back({s, cell.voc(s)});
    return out;
  }
} // namespace

// Resistive loss in a finger contacted at one end that collects uniformly
// from a strip of width S: fractional power loss
//   p = rho_sq L^2 S J_mp / (3 w_f V_mp)
// (M. A. Green, Solar Cells: Operating Principles, Technology and System
// Applications, 1982, section on resistive losses in top-contact fingers).
// Hole fingers of 2 ohm/sq (about 0.15 % loss: the linear regime), ideal
// electron fingers, at the period's maximum power point.
TEST(CombElectrodes, FingerLossMatchesGreenInTheLinearRegime)
{
  const OneDiode             cell;
  const std::vector<JVPoint> period = cell.table(0);
  const JVMetrics            mpp    = jv_metrics(period);
  ASSERT_TRUE(mpp.valid);

  ElectrodeParameters e;
  e.finger_length_mm      = 1;
  e.hole_sheet_resistance = 2;
  const CombOperatingPoint op = CombCell(period, widths, e).solve(mpp.Vmp);

  const double L = 0.1, S = widths.pitch_um * cm_per_um, w = widths.hole_finger_um * cm_per_um;
  const double green = e.hole_sheet_resistance * L * L * S * (mpp.Jmp * 1e-3) / (3 * w * mpp.Vmp);
  const double fraction = op.hole_finger_loss / op.generated_power;
  std::printf("finger loss fraction %.6e, Green %.6e, ratio %.5f\n", fraction, green, fraction / green);
  EXPECT_NEAR(fraction / green, 1.0, 0.02);
  EXPECT_EQ(op.electron_finger_loss, 0.0);
}

// Suns-Voc (R. A. Sinton, A. Cuevas, Proc. 16th European Photovoltaic
// Solar Energy Conference, 2000): V_oc(s) carries no series-resistance drop,
// so the pseudo J-V lies above the light J-V by J R_s; the synthetic cell's
// R_s is returned within 5 %, and 0 within 0.01 ohm cm^2 (2 % of the
// smaller case).
TEST(SunsVoc, RecoversTheLumpedSeriesResistance)
{
  const OneDiode cell;
  const PseudoJV pseudo(suns_voc(cell), cell.Jsc);
  for (const double rs : {0.0, 0.5, 3.0})
    {
      const SeriesResistance r = series_resistance(pseudo, cell.table(rs), 100);
      std::printf("Rs set %.3f, extracted %.5f ohm cm^2\n", rs, r.series_resistance);
      if (rs == 0)
        EXPECT_NEAR(r.series_resistance, 0.0, 0.01);
      else
        EXPECT_NEAR(r.series_resistance / rs, 1.0, 0.05);
    }
  // The pseudo FF is that of the resistance-free diode: the empirical
  // FF0 = (voc - ln(voc + 0.72)) / (voc + 1), voc = Voc / (n Vt), accurate to
  // about 1e-4 for voc > 10 (M. A. Green, "Solar cell fill factors: general
  // graph and empirical expressions", Solid-State Electronics 24 (1981)
  // 788-789; citation from memory).
  const JVMetrics pm  = pseudo.metrics();
  const double    voc = cell.voc(1) / (cell.n * cell.Vt);
  const double    ff0 = (voc - std::log(voc + 0.72)) / (voc + 1);
  std::printf("pseudo FF %.5f, Green FF0 %.5f\n", pm.FF, ff0);
  ASSERT_TRUE(pm.valid);
  EXPECT_NEAR(pm.FF, ff0, 1e-3);
  // Without light there is no photovoltage: the pseudo curve's Jsc is J_sc.
  EXPECT_NEAR(pm.Jsc, cell.Jsc, 1e-12);
}

// The pseudo J-V's dense table starts at the lowest intensity, J = J_sc
// (1 - s_min), and 1 - J/J_sc comes back from it a rounding error below
// s_min for some J_sc (17.2 mA/cm^2 with s_min = 0.001): the end is still
// inside the measured intensities. The pseudo V_oc is the 1-sun V_oc.
TEST(SunsVoc, PseudoJVTakesTheEndsOfItsIntensities)
{
  const PseudoJV pseudo({{0.001, 0.90}, {0.01, 1.00}, {0.1, 1.10}, {1.0, 1.20}}, 17.2);
  const JVMetrics pm = pseudo.metrics();
  ASSERT_TRUE(pm.valid);
  EXPECT_NEAR(pm.Voc, 1.20, 1e-12);
  EXPECT_NEAR(pseudo.voltage(17.2 * (1 - 0.001)), 0.90, 1e-12);
  EXPECT_THROW(pseudo.voltage(17.2 * (1 - 0.0009)), std::domain_error);
}

// Power balance along the fingers: the film delivers integral i V_film dy,
// which the terminals, the fingers (integral R' I^2 dy) and the contacts
// (integral i^2 rho_c / w dy) share (energy conservation; exact for the
// Galerkin solution when the same quadrature is used). The cell current
// converges with the mesh: linear elements give errors of O(h^2)
// (e.g. S. C. Brenner, L. R. Scott, The Mathematical Theory of Finite
// Element Methods, 3rd ed., 2008, ch. 0), so halving h from 1/100 of the
// finger length changes the current by less than 1e-6 relative (about 5e-7
// here), and the changes fall by a factor of about 4 per halving.
TEST(CombElectrodes, PowerBalanceAndMeshConvergence)
{
  const OneDiode             cell;
  const std::vector<JVPoint> period = cell.table(0);
  for (const auto layout : {ElectrodeParameters::BusbarLayout::opposite_ends,
                            ElectrodeParameters::BusbarLayout::same_end})
    {
      ElectrodeParameters e;
      e.finger_length_mm             = 2;
      e.hole_sheet_resistance        = 20;
      e.electron_sheet_resistance    = 10;
      e.hole_contact_resistivity     = 0.02;
      e.electron_contact_resistivity = 0.01;
      e.busbar_layout                = layout;
      std::vector<double> currents;
      for (const unsigned n : {50u, 100u, 200u})
        {
          e.finger_elements           = n;
          const CombOperatingPoint op = CombCell(period, widths, e).solve(0.45);
          const double losses = op.hole_finger_loss + op.electron_finger_loss +
                                op.hole_contact_loss + op.electron_contact_loss;
          const double balance = (op.output_power + losses) / op.generated_power - 1;
          std::printf("layout %d, %u elements: J %.9f mA/cm^2, P_out %.6f, fingers %.6f + %.6f, "
                      "contacts %.6f + %.6f, generated %.6f mW/cm^2, balance %.2e, drop %.4f V, "
                      "%u Newton iterations\n",
                      static_cast<int>(layout), n, op.current, op.output_power, op.hole_finger_loss,
                      op.electron_finger_loss, op.hole_contact_loss, op.electron_contact_loss,
                      op.generated_power, balance, op.largest_bias_deviation, op.newton_iterations);
          EXPECT_NEAR(balance, 0.0, 1e-6);
          EXPECT_GT(op.hole_finger_loss, 0.0);
          EXPECT_GT(op.electron_finger_loss, 0.0);
          currents.push_back(op.current);
        }
      const double coarse = std::abs(currents[1] / currents[0] - 1);
      const double change = std::abs(currents[2] / currents[1] - 1);
      std::printf("relative change 50->100: %.2e, 100->200: %.2e\n", coarse, change);
      EXPECT_LT(change, 1e-6);
      // Second order: each halving divides the change by about 4.
      EXPECT_NEAR(coarse / change, 4.0, 0.5);
    }
}

// Ideal combs: the finger voltages are uniform, so the cell's J-V per
// footprint is the period's at every table voltage.
TEST(CombElectrodes, ZeroResistanceGivesThePeriodJV)
{
  const OneDiode             cell;
  const std::vector<JVPoint> period = cell.table(0.5);
  std::vector<double>        voltages;
  for (const auto &p : period)
    voltages.push_back(p.voltage);
  const std::vector<JVPoint> cell_jv = CombCell(period, widths, ElectrodeParameters()).jv(voltages);
  ASSERT_EQ(cell_jv.size(), period.size());
  for (std::size_t k = 0; k < period.size(); ++k)
    EXPECT_NEAR(cell_jv[k].current, period[k].current, 1e-12 * std::max(1.0, std::abs(period[k].current)))
      << "at " << period[k].voltage << " V";
}

// Contact resistivity alone is a lumped resistor in series (Ohm's law): per
// unit finger length i = J P flows through rho_c,h / w_h and rho_c,e / w_e,
// so the cell delivers the period's J_k at V_k - J_k P (rho_h / w_h +
// rho_e / w_e).
TEST(CombElectrodes, ContactResistivityShiftsTheVoltageByOhmsLaw)
{
  const OneDiode             cell;
  const std::vector<JVPoint> period = cell.table(0);
  ElectrodeParameters        e;
  e.hole_contact_resistivity     = 0.05;
  e.electron_contact_resistivity = 0.02;
  const CombCell comb(period, widths, e);
  const double   P = widths.pitch_um * cm_per_um;
  const double   R = P * (e.hole_contact_resistivity / (widths.hole_finger_um * cm_per_um) +
                        e.electron_contact_resistivity / (widths.electron_finger_um * cm_per_um));
  for (std::size_t k = 10; k < period.size(); k += 40)
    {
      const double             V  = period[k].voltage - period[k].current * 1e-3 * R;
      const CombOperatingPoint op = comb.solve(V);
      EXPECT_NEAR(op.current, period[k].current, 1e-8 * std::max(1.0, std::abs(period[k].current)))
        << "table point " << period[k].voltage << " V";
      EXPECT_NEAR(op.hole_contact_loss + op.electron_contact_loss,
                  std::pow(period[k].current * 1e-3, 2) * R * 1e3,
                  1e-8 * std::max(1.0, op.generated_power));
    }
}

// The split of R_s on a cell whose parts are known: the film's own lumped
// 0.5 ohm cm^2, the contacts' P (rho_h / w_h + rho_e / w_e) = 0.12 ohm cm^2
// (Ohm's law) and the fingers' rho_sq L^2 P / (3 w) each (the distributed
// resistance of a finger collecting uniformly, M. A. Green, Solar Cells,
// 1982, as above): 2 x 0.1 ohm cm^2. Each within 5 %.
TEST(SunsVoc, SplitsSeriesResistanceIntoFilmContactsAndFingers)
{
  const OneDiode      cell;
  const PseudoJV      pseudo(suns_voc(cell), cell.Jsc);
  ElectrodeParameters e;
  e.finger_length_mm             = 1;
  e.hole_sheet_resistance        = 5;
  e.electron_sheet_resistance    = 5;
  e.hole_contact_resistivity     = 0.01;
  e.electron_contact_resistivity = 0.01;
  const auto split = split_series_resistance(pseudo, cell.table(0.5), widths, e);
  std::printf("Rs total %.5f: film %.5f, contacts %.5f, fingers %.5f ohm cm^2\n", split.total,
              split.film, split.contacts, split.fingers);
  EXPECT_NEAR(split.film / 0.5, 1.0, 0.05);
  EXPECT_NEAR(split.contacts / 0.12, 1.0, 0.05);
  EXPECT_NEAR(split.fingers / 0.2, 1.0, 0.05);
}

// A cell whose fingers would need the period J-V beyond its table is
// refused with the voltages named (the film voltage exceeds the terminal
// voltage while the cell delivers power).
TEST(CombElectrodes, RefusesToExtrapolateThePeriodJV)
{
  const OneDiode      cell;
  ElectrodeParameters e;
  e.finger_length_mm      = 1;
  e.hole_sheet_resistance = 50;
  const CombCell comb(cell.table(0, -0.1, 0.4), widths, e);
  EXPECT_NO_THROW(comb.solve(0.3));
  try
    {
      comb.solve(0.4);
      ADD_FAILURE() << "expected std::domain_error";
    }
  catch (const std::domain_error &x)
    {
      EXPECT_NE(std::string(x.what()).find("outside the period J-V table"), std::string::npos) << x.what();
    }
}

// Fritsch and Carlson's limiter (F. N. Fritsch, R. E. Carlson, SIAM J.
// Numer. Anal. 17 (1980) 238, theorem 2 with the region alpha^2 + beta^2
// <= 9) keeps the interpolant monotone where the data are: a J-V with a
// sharp knee, on which an unlimited cubic overshoots, is interpolated
// without overshoot, through the table points, with a derivative that is
// continuous across them.
TEST(CombElectrodes, InterpolationIsMonotoneAndContinuouslyDifferentiable)
{
  const std::vector<JVPoint> knee{{0.0, 20, true, 0},  {0.1, 20, true, 0},  {0.2, 19.9, true, 0},
                                  {0.25, 15, true, 0}, {0.3, 0, true, 0},   {0.32, -20, true, 0},
                                  {0.5, -21, true, 0}};
  const JVInterpolant        f(knee);
  double                     previous = f.current(0);
  for (double v = 0; v <= 0.5; v += 1e-4)
    {
      const double J = f.current(v);
      EXPECT_LE(J, previous + 1e-12) << "rises at " << v << " V";
      EXPECT_LE(f.slope(v), 1e-12) << "positive slope at " << v << " V";
      previous = J;
    }
  for (std::size_t k = 0; k < knee.size(); ++k)
    {
      EXPECT_NEAR(f.current(knee[k].voltage), knee[k].current, 1e-12);
      if (k > 0 && k + 1 < knee.size())
        {
          EXPECT_NEAR(f.slope(knee[k].voltage - 1e-11), f.slope(knee[k].voltage + 1e-11),
                      1e-5 * (1 + std::abs(f.slope(knee[k].voltage))))
            << "slope jumps at " << knee[k].voltage << " V";
        }
    }
}
