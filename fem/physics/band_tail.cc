#include "fem/physics/band_tail.h"

#include "base/entries.h"

#include <algorithm>
#include <cmath>

namespace backcomb::fem
{
  namespace
  {
    // Ranges: tail densities up to the order of the band's own density of
    // states; characteristic energies from 1 meV (narrower tails need more
    // panels than is reasonable, see the quadrature note in the header) to
    // 0.5 eV; capture coefficients up to 1e-3 cm^3/s (far above any
    // reported value, so it only rejects unit mistakes).
    const NumberEntry conduction_density{"Conduction tail density", 0.0, "cm^-3", Range::closed(0.0, 1e22),
                                         "Total density N_tc in cm^-3 of the exponential tail states below the "
                                         "conduction band edge, g(E) = N_tc/E_Uc exp(-(E_c - E)/E_Uc); "
                                         "0 switches this tail off"};
    const NumberEntry conduction_energy{"Conduction tail energy", 0.03, "eV", Range::closed(1e-3, 0.5),
                                        "Characteristic energy E_Uc in eV of the conduction band tail"};
    const NumberEntry valence_density{"Valence tail density", 0.0, "cm^-3", Range::closed(0.0, 1e22),
                                      "Total density N_tv in cm^-3 of the exponential tail states above the valence "
                                      "band edge, g(E) = N_tv/E_Uv exp(-(E - E_v)/E_Uv); 0 switches this "
                                      "tail off"};
    const NumberEntry valence_energy{"Valence tail energy", 0.03, "eV", Range::closed(1e-3, 0.5),
                                     "Characteristic energy E_Uv in eV of the valence band tail"};
    const NumberEntry electron_capture{"Electron capture coefficient", 1e-9, "cm^3/s", Range::closed(0.0, 1e-3),
                                       "Electron capture coefficient C_n in cm^3/s of every tail state"};
    const NumberEntry hole_capture{"Hole capture coefficient", 1e-9, "cm^3/s", Range::closed(0.0, 1e-3),
                                   "Hole capture coefficient C_p in cm^3/s of every tail state"};

    const NumberEntry *const all_entries[] = {&conduction_density, &conduction_energy, &valence_density,
                                              &valence_energy,     &electron_capture,  &hole_capture};

    std::string
    key(const NumberEntry &e)
    {
      return std::string(BandTailChannel::subsection) + "/" + e.name;
    }

    double
    number(const Material &m, const NumberEntry &e)
    {
      const auto it = m.model_numbers.find(key(e));
      return it == m.model_numbers.end() ? e.default_value : it->second;
    }

    // 4-point Gauss-Legendre rule on [-1, 1] (M. Abramowitz, I. A. Stegun,
    // Handbook of Mathematical Functions, 1964, table 25.4).
    constexpr double gl_x[4] = {-0.861136311594052575, -0.339981043584856265, 0.339981043584856265,
                                0.861136311594052575};
    constexpr double gl_w[4] = {0.347854845137453857, 0.652145154862546143, 0.652145154862546143,
                                0.347854845137453857};
  } // namespace

  BandTailChannel::Parameters
  BandTailChannel::parameters_of(const Material &m)
  {
    Parameters p;
    p.conduction_density = number(m, conduction_density);
    p.conduction_energy  = number(m, conduction_energy);
    p.valence_density    = number(m, valence_density);
    p.valence_energy     = number(m, valence_energy);
    p.C_n                = number(m, electron_capture);
    p.C_p                = number(m, hole_capture);
    return p;
  }

  void
  BandTailChannel::store(const Parameters &p, Material &m)
  {
    m.model_numbers[key(conduction_density)] = p.conduction_density;
    m.model_numbers[key(conduction_energy)]  = p.conduction_energy;
    m.model_numbers[key(valence_density)]    = p.valence_density;
    m.model_numbers[key(valence_energy)]     = p.valence_energy;
    m.model_numbers[key(electron_capture)]   = p.C_n;
    m.model_numbers[key(hole_capture)]       = p.C_p;
  }

  void
  BandTailChannel::declare_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                      const Material &defaults) const
  {
    prm.enter_subsection(subsection);
    for (const NumberEntry *e : all_entries)
      declare(prm, section + "/" + subsection, *e, number(defaults, *e));
    prm.leave_subsection();
  }

  void
  BandTailChannel::parse_parameters(dealii::ParameterHandler &prm, const std::string &section,
                                    Material &m) const
  {
    prm.enter_subsection(subsection);
    for (const NumberEntry *e : all_entries)
      m.model_numbers[key(*e)] = get(prm, section + "/" + subsection, *e);
    prm.leave_subsection();
  }

  bool
  BandTailChannel::active(const Material &m) const
  {
    const Parameters p = parameters_of(m);
    return p.conduction_density > 0 || p.valence_density > 0;
  }

  void
  BandTailChannel::setup(const Material &m, const ChannelUnits &u)
  {
    const Parameters p = parameters_of(m);
    // Capture coefficients in cm^3/s times N0 t0, like B.
    C_n = p.C_n * u.N0 * u.t0;
    C_p = p.C_p * u.N0 * u.t0;
    ni2 = u.ni2;
    nodes_.clear();
    const double gap = 2 * u.half_gap * u.kT; // eV
    // One tail: density N (in N0), characteristic energy E_U, and whether
    // the depth e is measured from the conduction band (level at
    // E_g/2 - e above midgap) or from the valence band (at e - E_g/2).
    const auto add_tail = [&](const double N, const double E_U, const bool conduction) {
      if (!(N > 0))
        return;
      const unsigned panels = static_cast<unsigned>(std::ceil(gap / std::min(E_U, u.kT)));
      const double   h      = gap / panels;
      for (unsigned k = 0; k < panels; ++k)
        for (unsigned q = 0; q < 4; ++q)
          {
            const double e      = (k + 0.5 * (1 + gl_x[q])) * h;
            const double weight = N / E_U * std::exp(-e / E_U) * 0.5 * h * gl_w[q];
            if (weight == 0)
              continue;
            const double level = (conduction ? u.half_gap - e / u.kT : e / u.kT - u.half_gap);
            nodes_.push_back({u.n1(level), u.p1(level), weight});
          }
    };
    add_tail(p.conduction_density / u.N0, p.conduction_energy, true);
    add_tail(p.valence_density / u.N0, p.valence_energy, false);
  }

  Rate
  BandTailChannel::rate(const double n, const double p) const
  {
    // Per node: w C_n C_p (np - n_i^2) / (C_n (n + n1) + C_p (p + p1)); its
    // derivatives follow from the quotient rule with d(den)/dn = C_n and
    // d(den)/dp = C_p.
    const double c   = C_n * C_p;
    const double num = c * (n * p - ni2);
    Rate         r;
    for (const Node &k : nodes_)
      {
        const double den = C_n * (n + k.n1) + C_p * (p + k.p1);
        if (!(den > 0))
          continue;
        const double inv = k.weight / den;
        r.R += num * inv;
        r.dR_dn += (c * p - num * C_n / den) * inv;
        r.dR_dp += (c * n - num * C_p / den) * inv;
      }
    return r;
  }

  InverseLifetimes
  BandTailChannel::low_injection(const double n0, const double p0) const
  {
    InverseLifetimes l;
    const double     c = C_n * C_p;
    for (const Node &k : nodes_)
      {
        const double den_n = C_n * k.n1 + C_p * (p0 + k.p1);
        const double den_p = C_n * (n0 + k.n1) + C_p * k.p1;
        if (den_n > 0)
          l.electrons += k.weight * c * p0 / den_n;
        if (den_p > 0)
          l.holes += k.weight * c * n0 / den_p;
      }
    return l;
  }
} // namespace backcomb::fem
