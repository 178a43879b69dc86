#include "fem/comb_electrodes.h"

#include "base/entries.h"

#include <deal.II/base/quadrature_lib.h>
#include <deal.II/lac/sparse_direct.h>
#include <deal.II/lac/sparse_matrix.h>
#include <deal.II/lac/sparsity_pattern.h>
#include <deal.II/lac/vector.h>

#include <algorithm>
#include <cmath>
#include <sstream>

namespace backcomb::fem
{
  namespace
  {
    const std::string section = "Electrodes";

    // Unit conversions at the edge: inside CombCell lengths are in cm,
    // currents in A, voltages in V.
    constexpr double cm_per_um = 1e-4, cm_per_mm = 0.1;
    constexpr double A_per_mA  = 1e-3;

    std::string
    number_text(const double v)
    {
      std::ostringstream s;
      s.precision(10);
      s << v;
      return s.str();
    }
  } // namespace

  // ---------------------------------------------------------------- input

  bool
  ElectrodeParameters::ideal() const
  {
    return electron_sheet_resistance == 0 && hole_sheet_resistance == 0 &&
           electron_contact_resistivity == 0 && hole_contact_resistivity == 0;
  }

  namespace
  {
    // The numeric entries of section "Electrodes"; the defaults are those of
    // ElectrodeParameters.
    const ElectrodeParameters electrode_defaults;
    const NumberEntry finger_length{
      "Finger length", electrode_defaults.finger_length_mm, "mm", Range::above(0, 1000),
      "Length of the fingers from busbar to free end. Used for the whole-cell J-V when a "
      "resistance below is set"};
    const NumberEntry hole_sheet_resistance_entry{
      "Hole finger sheet resistance", electrode_defaults.hole_sheet_resistance, "ohm/sq",
      Range::closed(0, 1e9), "Sheet resistance of the hole comb's fingers (0 = ideal conductor)"};
    const NumberEntry electron_sheet_resistance_entry{
      "Electron finger sheet resistance", electrode_defaults.electron_sheet_resistance, "ohm/sq",
      Range::closed(0, 1e9),
      "Sheet resistance of the electron comb's fingers (0 = ideal conductor)"};
    const NumberEntry hole_contact_resistivity_entry{
      "Hole contact resistivity", electrode_defaults.hole_contact_resistivity, "ohm cm^2",
      Range::closed(0, 1e6),
      "Specific contact resistivity between the film and the hole fingers (0 = none)"};
    const NumberEntry electron_contact_resistivity_entry{
      "Electron contact resistivity", electrode_defaults.electron_contact_resistivity,
      "ohm cm^2", Range::closed(0, 1e6),
      "Specific contact resistivity between the film and the electron fingers (0 = none)"};
    const NumberEntry finger_elements_entry{
      "Finger elements", double(electrode_defaults.finger_elements), "",
      Range::whole_numbers(2, 100000), "Number of 1D finite elements along a finger"};
  } // namespace

  void
  ElectrodeParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(section);
    declare(prm, section, finger_length);
    declare(prm, section, hole_sheet_resistance_entry);
    declare(prm, section, electron_sheet_resistance_entry);
    declare(prm, section, hole_contact_resistivity_entry);
    declare(prm, section, electron_contact_resistivity_entry);
    declare_text(prm, section, "Busbar layout", "opposite ends",
                 dealii::Patterns::Selection("opposite ends|same end"), "",
                 "opposite ends: the hole busbar joins the fingers at one end and the "
                 "electron busbar at the other (interdigitated comb); same end: both "
                 "busbars at the same end (e.g. two metallisation levels).");
    declare(prm, section, finger_elements_entry);
    prm.leave_subsection();
  }

  void
  ElectrodeParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(section);
    finger_length_mm             = get(prm, section, finger_length);
    hole_sheet_resistance        = get(prm, section, hole_sheet_resistance_entry);
    electron_sheet_resistance    = get(prm, section, electron_sheet_resistance_entry);
    hole_contact_resistivity     = get(prm, section, hole_contact_resistivity_entry);
    electron_contact_resistivity = get(prm, section, electron_contact_resistivity_entry);
    busbar_layout = prm.get("Busbar layout") == "same end" ? BusbarLayout::same_end
                                                           : BusbarLayout::opposite_ends;
    finger_elements = static_cast<unsigned>(get(prm, section, finger_elements_entry));
    prm.leave_subsection();
  }

  // -------------------------------------------------------- interpolation

  JVInterpolant::JVInterpolant(const std::vector<JVPoint> &table)
  {
    if (table.size() < 2)
      throw std::invalid_argument("J-V interpolation: the table needs at least two points, got " +
                                  std::to_string(table.size()));
    for (std::size_t k = 0; k < table.size(); ++k)
      {
        const auto &p = table[k];
        if (!p.converged || !std::isfinite(p.voltage) || !std::isfinite(p.current))
          throw std::invalid_argument("J-V interpolation: the point at " + number_text(p.voltage) +
                                      " V is not a converged, finite point");
        if (k > 0 && !(p.voltage > table[k - 1].voltage))
          throw std::invalid_argument("J-V interpolation: voltages must increase strictly, but " +
                                      number_text(p.voltage) + " V follows " +
                                      number_text(table[k - 1].voltage) + " V");
        v_.push_back(p.voltage);
        j_.push_back(p.current);
      }

    // Secants, then three-point slopes (exact for parabolas on an uneven
    // grid), set to zero at local extrema, then limited so that
    // alpha^2 + beta^2 <= 9 on every interval (Fritsch and Carlson 1980,
    // the sufficient condition for monotonicity, their eq. (3.4) region).
    const std::size_t   n = v_.size();
    std::vector<double> h(n - 1), secant(n - 1);
    for (std::size_t k = 0; k + 1 < n; ++k)
      {
        h[k]      = v_[k + 1] - v_[k];
        secant[k] = (j_[k + 1] - j_[k]) / h[k];
      }
    m_.assign(n, 0.0);
    m_.front() = secant.front();
    m_.back()  = secant.back();
    for (std::size_t k = 1; k + 1 < n; ++k)
      if (secant[k - 1] * secant[k] > 0)
        m_[k] = (h[k] * secant[k - 1] + h[k - 1] * secant[k]) / (h[k - 1] + h[k]);
    for (std::size_t k = 0; k + 1 < n; ++k)
      {
        if (secant[k] == 0)
          {
            m_[k] = m_[k + 1] = 0;
            continue;
          }
        double alpha = m_[k] / secant[k], beta = m_[k + 1] / secant[k];
        // A slope of the wrong sign (possible only at the ends, where the
        // slope is a one-sided secant of the neighbouring interval) is zeroed.
        if (alpha < 0)
          m_[k] = alpha = 0;
        if (beta < 0)
          m_[k + 1] = beta = 0;
        const double r2 = alpha * alpha + beta * beta;
        if (r2 > 9)
          {
            const double tau = 3 / std::sqrt(r2);
            m_[k]            = tau * alpha * secant[k];
            m_[k + 1]        = tau * beta * secant[k];
          }
      }
  }

  bool
  JVInterpolant::contains(const double voltage, const double margin) const
  {
    return voltage >= v_.front() - margin && voltage <= v_.back() + margin;
  }

  double
  JVInterpolant::current(const double v) const
  {
    if (v <= v_.front())
      return j_.front() + m_.front() * (v - v_.front());
    if (v >= v_.back())
      return j_.back() + m_.back() * (v - v_.back());
    const std::size_t k =
      std::upper_bound(v_.begin(), v_.end(), v) - v_.begin() - 1;
    const double h = v_[k + 1] - v_[k], t = (v - v_[k]) / h;
    const double t2 = t * t, t3 = t2 * t;
    return (2 * t3 - 3 * t2 + 1) * j_[k] + (t3 - 2 * t2 + t) * h * m_[k] +
           (-2 * t3 + 3 * t2) * j_[k + 1] + (t3 - t2) * h * m_[k + 1];
  }

  double
  JVInterpolant::slope(const double v) const
  {
    if (v <= v_.front())
      return m_.front();
    if (v >= v_.back())
      return m_.back();
    const std::size_t k =
      std::upper_bound(v_.begin(), v_.end(), v) - v_.begin() - 1;
    const double h = v_[k + 1] - v_[k], t = (v - v_[k]) / h;
    const double t2 = t * t;
    return (6 * t2 - 6 * t) / h * (j_[k] - j_[k + 1]) + (3 * t2 - 4 * t + 1) * m_[k] +
           (3 * t2 - 2 * t) * m_[k + 1];
  }

  // ------------------------------------------------------------ comb cell

  CombCell::CombCell(const std::vector<JVPoint> &period_jv,
                     const CombWidths           &widths,
                     const ElectrodeParameters  &electrodes)
    : film_(period_jv)
    , electrodes_(electrodes)
  {
    if (!(widths.electron_finger_um > 0 && widths.hole_finger_um > 0 &&
          widths.pitch_um >= widths.electron_finger_um + widths.hole_finger_um))
      throw std::invalid_argument("comb cell: finger widths must be > 0 and the pitch at least "
                                  "their sum");
    if (!(electrodes.finger_length_mm > 0) || electrodes.finger_elements < 2 ||
        !(electrodes.hole_sheet_resistance >= 0) || !(electrodes.electron_sheet_resistance >= 0) ||
        !(electrodes.hole_contact_resistivity >= 0) ||
        !(electrodes.electron_contact_resistivity >= 0))
      throw std::invalid_argument("comb cell: invalid electrode parameters");
    const double w_h = widths.hole_finger_um * cm_per_um;
    const double w_e = widths.electron_finger_um * cm_per_um;
    pitch_cm_        = widths.pitch_um * cm_per_um;
    length_cm_       = electrodes.finger_length_mm * cm_per_mm;
    r_hole_          = electrodes.hole_sheet_resistance / w_h;
    r_electron_      = electrodes.electron_sheet_resistance / w_e;
    rc_hole_         = electrodes.hole_contact_resistivity / w_h;
    rc_electron_     = electrodes.electron_contact_resistivity / w_e;
    hole_busbar_node_ = 0;
    electron_busbar_node_ =
      electrodes.busbar_layout == ElectrodeParameters::BusbarLayout::same_end ? 0
                                                                              : electrodes.finger_elements;
  }

  CombCell::LocalLaw
  CombCell::local_law(const double dV) const
  {
    // i = k J(V_film) with k converting mA/cm^2 of footprint to A per cm
    // of finger pair; the contacts put the film at V_film = dV + i R_c,
    // with c = k R_c in V per mA/cm^2.
    const double k = pitch_cm_ * A_per_mA;
    const double c = k * (rc_hole_ + rc_electron_);
    double       x = dV;
    if (c > 0)
      {
        // f(x) = x - c J(x) - dV rises with x when J falls with V (f' =
        // 1 - c J' >= 1): bracket the root, then Newton safeguarded by
        // bisection.
        const auto f = [&](const double v) { return v - c * film_.current(v) - dV; };
        double     a = dV, fa = f(a);
        if (fa != 0)
          {
            const double dir  = fa < 0 ? 1.0 : -1.0;
            double       step = std::max(std::abs(fa), 1e-6);
            double       b = a + dir * step, fb = f(b);
            for (unsigned n = 0; (fb < 0) == (fa < 0) && fb != 0; ++n)
              {
                if (n == 200)
                  throw std::runtime_error("comb cell: no film voltage matches the local bias " +
                                           number_text(dV) + " V behind the contact resistance");
                a = b, fa = fb, step *= 2;
                b = a + dir * step, fb = f(b);
              }
            double lo = fa < 0 ? a : b, hi = fa < 0 ? b : a;
            x = fb == 0 ? b : 0.5 * (lo + hi);
            for (unsigned n = 0; n < 200 && fb != 0; ++n)
              {
                const double fx = f(x);
                if (fx == 0)
                  break;
                (fx < 0 ? lo : hi) = x;
                const double dfx = 1 - c * film_.slope(x);
                double       xn  = dfx > 0 ? x - fx / dfx : 0.5 * (lo + hi);
                if (!(xn > std::min(lo, hi) && xn < std::max(lo, hi)))
                  xn = 0.5 * (lo + hi);
                const bool done = std::abs(xn - x) <= 1e-15 * (1 + std::abs(x));
                x               = xn;
                if (done)
                  break;
              }
          }
      }
    const double J  = film_.current(x);
    const double dJ = film_.slope(x);
    return {k * J, k * dJ / (1 - c * dJ), x};
  }

  // Galerkin residual of the two finger equations, each multiplied by its
  // R' (so R' = 0 leaves the Laplacian: a uniform finger), with the busbar
  // rows replaced by the Dirichlet conditions. Unknowns interleaved per
  // node: 2j hole finger, 2j+1 electron finger. Returns the 2-norm.
  double
  CombCell::residual(const double terminal_voltage, const std::vector<double> &u,
                     std::vector<double> &r) const
  {
    const unsigned      N = electrodes_.finger_elements;
    const double        h = length_cm_ / N;
    const dealii::QGauss<1> q(3);
    r.assign(u.size(), 0.0);
    for (unsigned e = 0; e < N; ++e)
      {
        const unsigned a = e, b = e + 1;
        const double   dVa = u[2 * a] - u[2 * a + 1], dVb = u[2 * b] - u[2 * b + 1];
        double         src[2] = {0, 0}; // integral of i phi_a, i phi_b
        for (unsigned p = 0; p < q.size(); ++p)
          {
            const double x = q.point(p)[0], w = q.weight(p) * h;
            const double i = local_law((1 - x) * dVa + x * dVb).current;
            src[0] += w * i * (1 - x);
            src[1] += w * i * x;
          }
        const double gh = (u[2 * a] - u[2 * b]) / h, ge = (u[2 * a + 1] - u[2 * b + 1]) / h;
        r[2 * a] += gh - r_hole_ * src[0];
        r[2 * b] += -gh - r_hole_ * src[1];
        r[2 * a + 1] += ge + r_electron_ * src[0];
        r[2 * b + 1] += -ge + r_electron_ * src[1];
      }
    r[2 * hole_busbar_node_]         = u[2 * hole_busbar_node_] - terminal_voltage;
    r[2 * electron_busbar_node_ + 1] = u[2 * electron_busbar_node_ + 1];
    double norm = 0;
    for (const double v : r)
      norm += v * v;
    return std::sqrt(norm);
  }

  CombOperatingPoint
  CombCell::newton(const double terminal_voltage, std::vector<double> &u) const
  {
    const unsigned N = electrodes_.finger_elements, n = 2 * (N + 1);
    const dealii::QGauss<1> q(3);
    const double            h = length_cm_ / N;

    // Each node couples to itself and its neighbours in both fingers.
    dealii::SparsityPattern pattern(n, n, 6);
    for (unsigned j = 0; j <= N; ++j)
      for (unsigned k = (j > 0 ? j - 1 : 0); k <= std::min(j + 1, N); ++k)
        for (unsigned c = 0; c < 2; ++c)
          for (unsigned d = 0; d < 2; ++d)
            pattern.add(2 * j + c, 2 * k + d);
    pattern.compress();
    dealii::SparseMatrix<double> jacobian(pattern);

    std::vector<double> r, trial(n), r_trial;
    double              norm = residual(terminal_voltage, u, r);
    unsigned            it   = 0;
    for (; it < 100; ++it)
      {
        jacobian = 0;
        for (unsigned e = 0; e < N; ++e)
          {
            const unsigned a = e, b = e + 1;
            const double   dVa = u[2 * a] - u[2 * a + 1], dVb = u[2 * b] - u[2 * b + 1];
            double         m[2][2] = {{0, 0}, {0, 0}}; // integral of i' phi_k phi_l
            for (unsigned p = 0; p < q.size(); ++p)
              {
                const double x = q.point(p)[0], w = q.weight(p) * h;
                const double di     = local_law((1 - x) * dVa + x * dVb).derivative;
                const double phi[2] = {1 - x, x};
                for (unsigned k = 0; k < 2; ++k)
                  for (unsigned l = 0; l < 2; ++l)
                    m[k][l] += w * di * phi[k] * phi[l];
              }
            const unsigned node[2] = {a, b};
            for (unsigned k = 0; k < 2; ++k)
              for (unsigned l = 0; l < 2; ++l)
                {
                  const double K  = (k == l ? 1.0 : -1.0) / h;
                  const unsigned hk = 2 * node[k], hl = 2 * node[l];
                  jacobian.add(hk, hl, K - r_hole_ * m[k][l]);
                  jacobian.add(hk, hl + 1, r_hole_ * m[k][l]);
                  jacobian.add(hk + 1, hl, r_electron_ * m[k][l]);
                  jacobian.add(hk + 1, hl + 1, K - r_electron_ * m[k][l]);
                }
          }
        for (const unsigned row : {2 * hole_busbar_node_, 2 * electron_busbar_node_ + 1})
          {
            for (auto entry = jacobian.begin(row); entry != jacobian.end(row); ++entry)
              entry->value() = 0;
            jacobian.set(row, row, 1.0);
          }

        dealii::SparseDirectUMFPACK solver;
        solver.factorize(jacobian);
        dealii::Vector<double> delta(r.begin(), r.end());
        solver.solve(delta);
        double largest = 0;
        for (const double d : delta)
          largest = std::max(largest, std::abs(d));

        // Backtracking: halve the step until the residual decreases (the
        // finger problem is monotone, so the full step is taken near the
        // solution). Steps below 1e-10 V are taken as they are: there the
        // residual is at round-off level and need not decrease.
        double step = 1;
        for (unsigned halving = 0;; ++halving)
          {
            for (unsigned k = 0; k < n; ++k)
              trial[k] = u[k] - step * delta[k];
            const double trial_norm = residual(terminal_voltage, trial, r_trial);
            if (trial_norm < norm || halving == 30 || largest * step < 1e-10)
              {
                u.swap(trial);
                r.swap(r_trial);
                norm = trial_norm;
                break;
              }
            step /= 2;
          }
        if (largest * step < 1e-11)
          break;
      }
    if (it == 100)
      throw std::runtime_error("comb cell: Newton did not converge along the fingers at "
                               "terminal voltage " + number_text(terminal_voltage) + " V");
    CombOperatingPoint op      = evaluate(terminal_voltage, u);
    op.newton_iterations       = it + 1;
    return op;
  }

  CombOperatingPoint
  CombCell::evaluate(const double terminal_voltage, const std::vector<double> &u) const
  {
    const unsigned          N = electrodes_.finger_elements;
    const double            h = length_cm_ / N;
    const dealii::QGauss<1> q(3);
    CombOperatingPoint      op;
    op.terminal_voltage = terminal_voltage;

    // The same quadrature as the residual: then terminal power + finger
    // losses + contact losses equals the generated power up to the Newton
    // tolerance (test phi = V_h - V_terminal, resp. V_e, in the weak form).
    double I = 0, generated = 0, contact_h = 0, contact_e = 0, finger_h = 0, finger_e = 0;
    for (unsigned e = 0; e < N; ++e)
      {
        const unsigned a = e, b = e + 1;
        const double   dVa = u[2 * a] - u[2 * a + 1], dVb = u[2 * b] - u[2 * b + 1];
        for (unsigned p = 0; p < q.size(); ++p)
          {
            const double x = q.point(p)[0], w = q.weight(p) * h;
            const auto   law = local_law((1 - x) * dVa + x * dVb);
            // A margin of 1e-9 V absorbs the round-off of the terminal
            // voltage at the table's ends.
            if (!film_.contains(law.film_voltage, 1e-9))
              {
                std::ostringstream s;
                s << "comb cell: at terminal voltage " << terminal_voltage
                  << " V the film voltage along the finger reaches " << law.film_voltage
                  << " V, outside the period J-V table [" << film_.min_voltage() << ", "
                  << film_.max_voltage()
                  << "] V; extend the J-V scan (the table must reach Voc)";
                throw std::domain_error(s.str());
              }
            I += w * law.current;
            generated += w * law.current * law.film_voltage;
            contact_h += w * law.current * law.current * rc_hole_;
            contact_e += w * law.current * law.current * rc_electron_;
          }
        // (1/R') integral of V'^2 = integral of R' I^2; zero for an ideal finger.
        const double dh = u[2 * b] - u[2 * a], de = u[2 * b + 1] - u[2 * a + 1];
        if (r_hole_ > 0)
          finger_h += dh * dh / (h * r_hole_);
        if (r_electron_ > 0)
          finger_e += de * de / (h * r_electron_);
      }
    // A and W per finger pair to mA/cm^2 and mW/cm^2 of footprint.
    const double per_footprint = 1e3 / (pitch_cm_ * length_cm_);
    op.current                 = I * per_footprint;
    op.output_power            = terminal_voltage * I * per_footprint;
    op.generated_power         = generated * per_footprint;
    op.hole_contact_loss       = contact_h * per_footprint;
    op.electron_contact_loss   = contact_e * per_footprint;
    op.hole_finger_loss        = finger_h * per_footprint;
    op.electron_finger_loss    = finger_e * per_footprint;

    for (unsigned j = 0; j <= N; ++j)
      {
        const double vh = u[2 * j], ve = u[2 * j + 1];
        op.hole_finger_drop       = std::max(op.hole_finger_drop, std::abs(vh - terminal_voltage));
        op.electron_finger_drop   = std::max(op.electron_finger_drop, std::abs(ve));
        op.largest_bias_deviation =
          std::max(op.largest_bias_deviation, std::abs(vh - ve - terminal_voltage));
        op.y_mm.push_back(j * h / cm_per_mm);
        op.hole_voltage.push_back(vh);
        op.electron_voltage.push_back(ve);
      }
    return op;
  }

  CombOperatingPoint
  CombCell::solve(const double terminal_voltage) const
  {
    std::vector<double> u(2 * (electrodes_.finger_elements + 1), 0.0);
    for (std::size_t k = 0; k < u.size(); k += 2)
      u[k] = terminal_voltage;
    return newton(terminal_voltage, u);
  }

  std::vector<CombOperatingPoint>
  CombCell::solve(const std::vector<double> &terminal_voltages) const
  {
    std::vector<CombOperatingPoint> out;
    std::vector<double>             u(2 * (electrodes_.finger_elements + 1), 0.0);
    double                          previous = 0;
    for (const double v : terminal_voltages)
      {
        // Shift the hole finger by the change of terminal voltage: the
        // previous solution's drops are the best guess for the next.
        for (std::size_t k = 0; k < u.size(); k += 2)
          u[k] += v - previous;
        previous = v;
        out.push_back(newton(v, u));
      }
    return out;
  }

  std::vector<JVPoint>
  CombCell::jv(const std::vector<double> &terminal_voltages) const
  {
    std::vector<JVPoint> out;
    for (const auto &op : solve(terminal_voltages))
      out.push_back({op.terminal_voltage, op.current, true, op.newton_iterations});
    return out;
  }

  // -------------------------------------------------------------- suns-Voc

  PseudoJV::PseudoJV(std::vector<SunsVocPoint> points, const double jsc_one_sun)
    : points_(std::move(points))
    , jsc_(jsc_one_sun)
  {
    if (!(jsc_ > 0) || !std::isfinite(jsc_))
      throw std::invalid_argument("suns-Voc: Jsc at one sun must be > 0 mA/cm^2, got " +
                                  number_text(jsc_));
    if (points_.size() < 2)
      throw std::invalid_argument("suns-Voc: at least two intensities are needed");
    std::sort(points_.begin(), points_.end(),
              [](const SunsVocPoint &a, const SunsVocPoint &b) { return a.suns < b.suns; });
    for (std::size_t k = 0; k < points_.size(); ++k)
      {
        const auto &p = points_[k];
        if (!(p.suns > 0) || !std::isfinite(p.suns) || !std::isfinite(p.voc))
          throw std::invalid_argument("suns-Voc: intensity " + number_text(p.suns) +
                                      " suns with Voc " + number_text(p.voc) +
                                      " V is not a positive intensity with a finite Voc");
        if (k > 0 && !(p.suns > points_[k - 1].suns && p.voc > points_[k - 1].voc))
          throw std::invalid_argument("suns-Voc: Voc must rise strictly with the intensity, but "
                                      "at " + number_text(p.suns) + " suns it is " +
                                      number_text(p.voc) + " V");
      }
  }

  double
  PseudoJV::voltage(const double current) const
  {
    // An intensity at an end of the range, as a current J_sc (1 - s_end)
    // gives, comes back from 1 - J/J_sc with a rounding error: within 1e-9
    // of the range it is taken as the end.
    const double lo = points_.front().suns, hi = points_.back().suns;
    double       s  = 1 - current / jsc_;
    if (s < lo && s > lo * (1 - 1e-9))
      s = lo;
    if (s > hi && s < hi * (1 + 1e-9))
      s = hi;
    if (!(s >= lo && s <= hi))
      throw std::domain_error("suns-Voc: the pseudo J-V at " + number_text(current) +
                              " mA/cm^2 needs Voc at " + number_text(s) +
                              " suns, outside the measured intensities [" +
                              number_text(points_.front().suns) + ", " +
                              number_text(points_.back().suns) + "]");
    return voc_at(s);
  }

  double
  PseudoJV::voc_at(const double s) const
  {
    std::size_t k = 0;
    while (k + 2 < points_.size() && s > points_[k + 1].suns)
      ++k;
    const auto &a = points_[k], &b = points_[k + 1];
    const double t = std::log(s / a.suns) / std::log(b.suns / a.suns);
    return a.voc + t * (b.voc - a.voc);
  }

  std::vector<JVPoint>
  PseudoJV::table() const
  {
    std::vector<JVPoint> out{{0.0, jsc_, true, 0}};
    for (const auto &p : points_)
      out.push_back({p.voc, jsc_ * (1 - p.suns), true, 0});
    return out;
  }

  JVMetrics
  PseudoJV::metrics() const
  {
    std::vector<JVPoint> dense{{0.0, jsc_, true, 0}};
    const double         lo = std::log(points_.front().suns), hi = std::log(points_.back().suns);
    constexpr unsigned   samples = 500;
    for (unsigned k = 0; k < samples; ++k)
      {
        const double s = std::exp(lo + (hi - lo) * k / (samples - 1));
        // At the sampled intensity itself, not through 1 - J/J_sc.
        dense.push_back({voc_at(s), jsc_ * (1 - s), true, 0});
      }
    return jv_metrics(dense);
  }

  SeriesResistance
  series_resistance(const PseudoJV &pseudo, const std::vector<JVPoint> &light_jv,
                    const double incident_power)
  {
    SeriesResistance out;
    out.light = jv_metrics(light_jv);
    if (!out.light.valid || !(out.light.Jmp > 0))
      throw std::invalid_argument("series resistance: the light J-V has no valid maximum power "
                                  "point (it must be converged and span 0 V to Voc)");
    out.pseudo                = pseudo.metrics();
    out.pseudo_efficiency     = incident_power > 0 ? out.pseudo.Pmax / incident_power : 0;
    out.pseudo_voltage_at_jmp = pseudo.voltage(out.light.Jmp);
    out.series_resistance =
      (out.pseudo_voltage_at_jmp - out.light.Vmp) / (out.light.Jmp * A_per_mA);
    return out;
  }

  SeriesResistanceSplit
  split_series_resistance(const PseudoJV             &pseudo,
                          const std::vector<JVPoint> &period_jv,
                          const CombWidths           &widths,
                          const ElectrodeParameters  &electrodes)
  {
    SeriesResistanceSplit out;
    const double film = series_resistance(pseudo, period_jv, 0).series_resistance;
    std::vector<double> voltages;
    for (const auto &p : period_jv)
      voltages.push_back(p.voltage);

    // The contacts alone: ideal fingers, the given contact resistivities.
    ElectrodeParameters contacts_only = electrodes;
    contacts_only.hole_sheet_resistance = contacts_only.electron_sheet_resistance = 0;
    const double with_contacts =
      contacts_only.ideal() ?
        film :
        series_resistance(pseudo, CombCell(period_jv, widths, contacts_only).jv(voltages), 0)
          .series_resistance;

    out.cell_jv  = electrodes.ideal() ? period_jv : CombCell(period_jv, widths, electrodes).jv(voltages);
    const auto s = series_resistance(pseudo, out.cell_jv, 0);
    out.cell     = s.light;
    out.total    = s.series_resistance;
    out.film     = film;
    out.contacts = with_contacts - film;
    out.fingers  = out.total - with_contacts;
    return out;
  }
} // namespace backcomb::fem
