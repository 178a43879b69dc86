// The whole comb cell: the period's J-V as the local law along the
// fingers, with the fingers' sheet resistance and the combs' contact
// resistivity; and the series resistance from suns-Voc with its split
// into film, contacts and fingers.
//
// Everything here is post-processing of a tabulated period J-V; no 2D
// solve happens in this file.
#pragma once

#include "fem/operating_points.h"

#include <deal.II/base/parameter_handler.h>

#include <stdexcept>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // Section "Electrodes" of the case file. The defaults are ideal combs
  // (no resistance), for which the cell J-V is the period J-V.
  struct ElectrodeParameters
  {
    // opposite ends: hole busbar at y = 0, electron busbar at y = L (the
    // standard interdigitated comb); same end: both busbars at y = 0.
    enum class BusbarLayout
    {
      opposite_ends,
      same_end
    };

    double       finger_length_mm                = 10;  // mm
    double       electron_sheet_resistance        = 0;   // ohm/sq, 0 = ideal
    double       hole_sheet_resistance            = 0;   // ohm/sq
    double       electron_contact_resistivity     = 0;   // ohm cm^2
    double       hole_contact_resistivity         = 0;   // ohm cm^2
    BusbarLayout busbar_layout                    = BusbarLayout::opposite_ends;
    unsigned     finger_elements                  = 100; // 1D elements along a finger

    // True when no resistance is set: the cell J-V is the period J-V.
    bool ideal() const;

    static void declare_parameters(dealii::ParameterHandler &prm);
    void        parse_parameters(dealii::ParameterHandler &prm);
  };

  // A monotone, continuously differentiable interpolant of a J-V table:
  // piecewise cubic Hermite with the slopes limited as in F. N. Fritsch,
  // R. E. Carlson, "Monotone piecewise cubic interpolation", SIAM J.
  // Numer. Anal. 17 (1980) 238-246. Between two table points where the
  // current is monotone the interpolant is monotone too, so Newton's
  // method along the fingers sees no spurious wiggles and a continuous
  // derivative.
  class JVInterpolant
  {
  public:
    // `table`: converged points sorted by strictly increasing voltage, at
    // least two. Throws std::invalid_argument otherwise.
    explicit JVInterpolant(const std::vector<JVPoint> &table);

    // Current (mA/cm^2) and dJ/dV (mA/cm^2/V) at `voltage`. Outside the
    // table both continue linearly with the end slope; callers that must
    // not extrapolate check contains() on the result.
    double current(double voltage) const;
    double slope(double voltage) const;

    // True when `voltage` lies in the table, widened by `margin` (V).
    bool   contains(double voltage, double margin = 0) const;
    double min_voltage() const { return v_.front(); }
    double max_voltage() const { return v_.back(); }

  private:
    std::vector<double> v_, j_, m_; // nodes, values, limited slopes
  };

  // Widths of one period in um: finger widths and the full pitch
  // P = w_e + w_h + 2 g (one electron finger, one hole finger, two gaps).
  struct CombWidths
  {
    double electron_finger_um = 0;
    double hole_finger_um     = 0;
    double pitch_um           = 0;
  };

  // The cell at one terminal voltage. Powers in mW/cm^2 of footprint
  // (pitch x finger length), current in mA/cm^2 of footprint, generator
  // convention (positive when delivering power).
  struct CombOperatingPoint
  {
    double   terminal_voltage = 0; // V, hole busbar against electron busbar
    double   current          = 0; // mA/cm^2
    double   output_power     = 0; // terminal voltage x current
    double   generated_power  = 0; // integral of i x film voltage along the finger
    double   hole_finger_loss = 0, electron_finger_loss = 0;   // integral R' I^2 dy
    double   hole_contact_loss = 0, electron_contact_loss = 0; // integral i^2 rho_c / w dy
    double   hole_finger_drop     = 0; // V, max |V_h(y) - V_terminal|
    double   electron_finger_drop = 0; // V, max |V_e(y)|
    double   largest_bias_deviation = 0; // V, max |V_h(y) - V_e(y) - V_terminal|
    unsigned newton_iterations    = 0;
    // Nodal finger voltages (V) at the positions y (mm from y = 0).
    std::vector<double> y_mm, hole_voltage, electron_voltage;
  };

  // One finger pair of length L_f collecting from a strip of one pitch P;
  // all pairs of the cell are alike, so its J-V per footprint is the cell's.
  //
  // Along the finger (y in [0, L_f]) the hole finger's voltage V_h and the
  // electron finger's V_e satisfy, with R'_x = rho_sq,x / w_x,
  //   -(1/R'_h) V_h'' = i(V_h - V_e),   (1/R'_e) V_e'' = i(V_h - V_e),
  // V_h = V_terminal and V_e = 0 at the busbar ends, no current at the free
  // ends. The local law per unit length is i(dV) = J(V_film) P with the
  // contact resistivities in series, dV = V_film - i (rho_c,h / w_h +
  // rho_c,e / w_e) (generator convention: the film sits above the
  // terminals by the drop across the contacts).
  //
  // Linear finite elements on a uniform mesh, Newton with a backtracking
  // line search; each equation is multiplied by R' so that zero sheet
  // resistance gives a uniform finger voltage without any division.
  class CombCell
  {
  public:
    CombCell(const std::vector<JVPoint>  &period_jv,
             const CombWidths            &widths,
             const ElectrodeParameters   &electrodes);

    // The cell at one terminal voltage, from a uniform initial guess.
    // Throws std::domain_error when the converged solution needs the period
    // J-V outside its table (extend the J-V scan: the table must cover the
    // film voltages, which lie between the terminal voltage and Voc), and
    // std::runtime_error when Newton does not converge.
    CombOperatingPoint solve(double terminal_voltage) const;

    // Several terminal voltages in the given order, each starting from the
    // previous solution.
    std::vector<CombOperatingPoint> solve(const std::vector<double> &terminal_voltages) const;

    // The cell J-V (mA/cm^2 of footprint) at the given voltages.
    std::vector<JVPoint> jv(const std::vector<double> &terminal_voltages) const;

  private:
    // Local current per unit length (A/cm) and its derivative (A/cm/V) at
    // the local voltage dV = V_h - V_e, and the film voltage behind the
    // contacts.
    struct LocalLaw
    {
      double current, derivative, film_voltage;
    };
    LocalLaw local_law(double dV) const;

    CombOperatingPoint newton(double terminal_voltage, std::vector<double> &u) const;
    double residual(double terminal_voltage, const std::vector<double> &u,
                    std::vector<double> &r) const;
    CombOperatingPoint evaluate(double terminal_voltage, const std::vector<double> &u) const;

    JVInterpolant       film_;
    ElectrodeParameters electrodes_;
    double pitch_cm_, length_cm_;
    double r_hole_, r_electron_;  // finger resistance per length, ohm/cm
    double rc_hole_, rc_electron_; // contact resistance times length, ohm cm
    unsigned hole_busbar_node_, electron_busbar_node_;
  };

  // One suns-Voc measurement: open-circuit voltage at an intensity.
  struct SunsVocPoint
  {
    double suns = 0; // intensity in suns (1 = the light J-V's illumination)
    double voc  = 0; // V
  };

  // The pseudo J-V of R. A. Sinton, A. Cuevas, "A quasi-steady-state
  // open-circuit voltage method for solar cell characterization", Proc.
  // 16th European Photovoltaic Solar Energy Conference (2000): at intensity
  // s the cell is at open circuit, so no current flows through the series
  // resistance, and superposition gives J = J_sc (1 - s) at V = V_oc(s).
  // Assumes J_sc proportional to s (linear photocurrent) and superposition.
  // V_oc is interpolated linearly in ln s between the measurements.
  class PseudoJV
  {
  public:
    // `points`: intensities > 0, strictly increasing V_oc with s; at least
    // two; `jsc_one_sun` > 0 in mA/cm^2. Throws std::invalid_argument.
    PseudoJV(std::vector<SunsVocPoint> points, double jsc_one_sun);

    // V on the pseudo curve at current J (mA/cm^2), i.e. V_oc at
    // s = 1 - J/J_sc. Throws std::domain_error when s lies outside the
    // measured intensities (no extrapolation).
    double voltage(double current) const;

    // The measurements as a J-V table (sorted by voltage) with the exact
    // point s = 0 (V = 0, J = J_sc) added.
    std::vector<JVPoint> table() const;

    // Metrics of the pseudo curve, evaluated on a dense resampling of the
    // interpolant (500 intensities, log-spaced) so that the pseudo FF does
    // not depend on how coarsely the intensities were measured. Needs a
    // measurement at s >= 1 for Voc.
    JVMetrics metrics() const;

    double jsc() const { return jsc_; }

  private:
    // V_oc at intensity s (suns) in [first, last measured], interpolated
    // linearly in ln s.
    double voc_at(double s) const;

    std::vector<SunsVocPoint> points_;
    double                    jsc_;
  };

  struct SeriesResistance
  {
    JVMetrics light;             // metrics of the light J-V
    JVMetrics pseudo;            // pseudo Jsc, Voc, FF, Pmax
    double    pseudo_efficiency = 0; // pseudo Pmax / incident power
    double    pseudo_voltage_at_jmp = 0; // V
    double    series_resistance = 0;     // ohm cm^2
  };

  // R_s = (V_pseudo(J_mp) - V_mp) / J_mp at the maximum power point of
  // `light_jv`, in ohm cm^2. `incident_power` in mW/cm^2 (for the pseudo
  // efficiency). Throws std::invalid_argument when the light J-V has no
  // valid maximum power point.
  SeriesResistance
  series_resistance(const PseudoJV &pseudo, const std::vector<JVPoint> &light_jv,
                    double incident_power);

  // R_s of the cell split by where it arises, all from the same pseudo
  // curve: film = R_s of the period J-V alone; contacts = R_s of the cell
  // with the contact resistivities only, minus film; fingers = the rest.
  // The cell J-Vs are evaluated at the period table's voltages.
  struct SeriesResistanceSplit
  {
    double total = 0, film = 0, contacts = 0, fingers = 0; // ohm cm^2
    JVMetrics cell;          // light metrics of the whole cell
    std::vector<JVPoint> cell_jv;
  };

  SeriesResistanceSplit
  split_series_resistance(const PseudoJV             &pseudo,
                          const std::vector<JVPoint> &period_jv,
                          const CombWidths           &widths,
                          const ElectrodeParameters  &electrodes);
} // namespace backcomb::fem
