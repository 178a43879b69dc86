#include "fem/photon_transport.h"

#include "base/errors.h"
#include "base/format.h"

#include <gsl/gsl_integration.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <stdexcept>
#include <string>

namespace backcomb::fem
{
  namespace photon_transport_detail
  {
    double
    fresnel_reflectance(const double n1, const double n2, const double mu1)
    {
      const double sin2 = n1 / n2 * std::sqrt(std::max(0.0, 1 - mu1 * mu1));
      if (sin2 >= 1)
        return 1; // total internal reflection
      const double mu2 = std::sqrt(1 - sin2 * sin2);
      const double rs  = (n1 * mu1 - n2 * mu2) / (n1 * mu1 + n2 * mu2);
      const double rp  = (n2 * mu1 - n1 * mu2) / (n2 * mu1 + n1 * mu2);
      return 0.5 * (rs * rs + rp * rp);
    }

    namespace
    {
      // 1 - exp(-x) (1 + x), accurate for small x.
      double
      one_minus_exp_times_one_plus(const double x)
      {
        if (x < 1e-4)
          return x * x * (0.5 - x / 3 + x * x / 8);
        return -std::expm1(-x) - x * std::exp(-x);
      }

      // Absorption within the pass fraction [phi0, 1] of one pass of optical
      // depth a, for a weight falling linearly from the pass's start to its
      // end (c0) and rising linearly (c1): int a e^{-a phi} (1 - phi) and
      // int a phi e^{-a phi} over [phi0, 1].
      struct PassIntegrals
      {
        double c0, c1;
      };
      PassIntegrals
      pass_integrals(const double a, const double phi0)
      {
        const double x     = a * (1 - phi0);
        const double start = std::exp(-a * phi0);
        const double total = start * -std::expm1(-x);
        const double c1    = start * (phi0 * -std::expm1(-x) + one_minus_exp_times_one_plus(x) / a);
        return {total - c1, c1};
      }

      // 1 - Rt Rb exp(-2a), accurate when it is small.
      double
      one_minus_round_trip(const double a, const double Rt, const double Rb)
      {
        if (Rt == 0 || Rb == 0)
          return 1;
        return -std::expm1(std::log(Rt) + std::log(Rb) - 2 * a);
      }
    } // namespace

    // Hits of the faces come every pass of optical depth a; the first after
    // a uniformly distributed fraction of a pass. Going up first: top
    // (escape 1 - Rt), then bottom (1 - Rb), and so on with the round trip
    // factor q = Rt Rb e^{-2a}. First hit reached with probability
    // p1 = (1 - e^{-a}) / a.
    SlabFates
    ray_fates(const double a, const double Rt, const double Rb)
    {
      const double e   = std::exp(-a);
      const double p1  = -std::expm1(-a) / a;
      const double den = 2 * one_minus_round_trip(a, Rt, Rb);
      SlabFates    f;
      f.escaped_top    = p1 * (1 - Rt) * (1 + Rb * e) / den;
      f.lost_substrate = p1 * (1 - Rb) * (1 + Rt * e) / den;
      f.absorbed       = 1 - f.escaped_top - f.lost_substrate;
      return f;
    }

    // Unfold the bounces into a straight path: after a vertical distance
    // d = (k + phi) t the photon has met k or k + 1 faces, k + 1 with
    // probability phi (the first hit is uniform within a pass). With the
    // mean products of reflectances over the two starting directions,
    // P_{2m} = (Rt Rb)^m and P_{2m+1} = (Rt Rb)^m (Rt + Rb)/2, the weight at
    // d is (1 - phi) P_k + phi P_{k+1} and the absorption density
    // (alpha/mu) e^{-alpha d/mu} times that weight; its integral beyond D
    // is a partial pass plus a geometric series over pairs of passes.
    Bounces::Bounces(const double a_, const double Rt_, const double Rb_)
      : a(a_), Rt(Rt_), Rb(Rb_)
    {
      L               = Rt * Rb;
      h               = 0.5 * (Rt + Rb);
      e               = std::exp(-a);
      q               = L * e * e;
      inv             = 1 / one_minus_round_trip(a, Rt, Rb);
      const auto full = pass_integrals(a, 0);
      odd_full        = e * (h * full.c0 + L * full.c1);
      even_full       = full.c0 + h * full.c1;
    }

    double
    Bounces::absorbed_beyond(const double D_over_t) const
    {
      const double k    = std::floor(D_over_t);
      const double phi0 = D_over_t - k;
      const double m    = std::floor(k / 2);
      const bool   even = (k - 2 * m) == 0;
      const double qm   = m == 0 ? 1 : std::pow(q, m);
      const auto   part = pass_integrals(a, phi0);
      if (even)
        return qm * (part.c0 + h * part.c1) + qm * inv * (odd_full + q * even_full);
      return qm * e * (h * part.c0 + L * part.c1) + qm * q * inv * (even_full + odd_full);
    }

    double
    ray_absorbed_beyond(const double D_over_t, const double a, const double Rt, const double Rb)
    {
      return Bounces(a, Rt, Rb).absorbed_beyond(D_over_t);
    }
  } // namespace photon_transport_detail

  using namespace photon_transport_detail;

  struct PhotonTransport::Ray
  {
    double  weight;    // photon fraction times angular weight
    double  a;         // alpha t / mu
    double  Rt, Rb;    // reflectances at top and bottom
    double  tan_theta; // lateral travel per vertical travel
    Bounces bounces;   // a, Rt and Rb with the pass integrals, for G(D)
  };

  namespace
  {
    // Gauss-Legendre nodes and weights on [lo, hi] (GSL's fixed-order
    // tables).
    void
    gauss_legendre(const int order, const double lo, const double hi,
                   std::vector<double> &x, std::vector<double> &w)
    {
      std::unique_ptr<gsl_integration_glfixed_table, decltype(&gsl_integration_glfixed_table_free)>
        table(gsl_integration_glfixed_table_alloc(order), &gsl_integration_glfixed_table_free);
      if (!table)
        throw std::runtime_error("cannot allocate a Gauss-Legendre table");
      for (int i = 0; i < order; ++i)
        {
          double xi, wi;
          gsl_integration_glfixed_point(lo, hi, i, &xi, &wi, table.get());
          x.push_back(xi);
          w.push_back(wi);
        }
    }

    // Cubic Hermite on [x0, x1] from values and slopes.
    double
    hermite(const double x0, const double x1, const double v0, const double v1,
            const double s0, const double s1, const double x)
    {
      const double h = x1 - x0, t = (x - x0) / h, t2 = t * t, t3 = t2 * t;
      return (2 * t3 - 3 * t2 + 1) * v0 + (t3 - 2 * t2 + t) * h * s0 + (-2 * t3 + 3 * t2) * v1 +
             (t3 - t2) * h * s1;
    }

    // The smallest and largest absorption coefficient (cm^-1) of the
    // emission once the photon fraction 1e-10 is left out at either end.
    std::pair<double, double>
    absorption_range(const EmissionSpectrum &emission)
    {
      std::vector<std::pair<double, double>> lines; // alpha, fraction
      for (std::size_t e = 0; e < emission.energy_eV.size(); ++e)
        if (emission.photon_fraction[e] > 0)
          lines.emplace_back(emission.alpha_per_cm[e], emission.photon_fraction[e]);
      std::sort(lines.begin(), lines.end());
      const auto first_beyond = [](auto begin, auto end) {
        double left_out = 0;
        for (auto it = begin; it != end; ++it)
          {
            left_out += it->second;
            if (left_out > 1e-10)
              return it->first;
          }
        return (end - 1)->first;
      };
      return {first_beyond(lines.begin(), lines.end()), first_beyond(lines.rbegin(), lines.rend())};
    }

    constexpr int image_grid_intervals = 2048;
    constexpr int summed_image_pairs   = 64;
  } // namespace

  PhotonTransport::PhotonTransport(const FilmOptics       &film,
                                   const EmissionSpectrum &emission,
                                   std::vector<double>     bin_edges_um)
    : edges_(std::move(bin_edges_um))
  {
    check_input(film, emission);
    period_       = edges_.back();
    thickness_cm_ = film.thickness_um * 1e-4;
    for (std::size_t i = 0; i + 1 < edges_.size(); ++i)
      widths_.push_back(edges_[i + 1] - edges_[i]);
    const auto rays = make_rays(film, emission);
    tabulate_lateral_tail(rays, film.thickness_um, absorption_range(emission));
    tabulate_images();
    assemble_operator();
  }

  void
  PhotonTransport::check_input(const FilmOptics &film, const EmissionSpectrum &emission) const
  {
    const auto bad = [](const std::string &option, const double value, const std::string &reason) {
      throw InputError("photon transport '" + option + "'", format_number(value), reason);
    };
    if (!(film.thickness_um > 0) || !(film.thickness_um < 1e4))
      bad("thickness_um", film.thickness_um, "must lie in (0, 1e4) um");
    if (!(film.top_index >= 1) || !(film.top_index < 10))
      bad("top_index", film.top_index, "must lie in [1, 10)");
    if (!(film.substrate_index >= 1) || !(film.substrate_index < 10))
      bad("substrate_index", film.substrate_index, "must lie in [1, 10)");
    if (film.angle_nodes < 4 || film.angle_nodes > 1000)
      bad("angle_nodes", film.angle_nodes, "must lie in 4-1000");
    if (edges_.size() < 2 || edges_.front() != 0)
      bad("bin edges", edges_.empty() ? 0.0 : edges_.front(),
          "need at least two edges, the first at x = 0 um");
    for (std::size_t i = 0; i + 1 < edges_.size(); ++i)
      if (!(edges_[i + 1] > edges_[i]) || !std::isfinite(edges_[i + 1]))
        bad("bin edges", edges_[i + 1],
            "must increase strictly (edge " + std::to_string(i + 1) + " after " +
              format_number(edges_[i]) + " um)");
    const std::size_t n = emission.energy_eV.size();
    if (n == 0 || emission.index.size() != n || emission.alpha_per_cm.size() != n ||
        emission.photon_fraction.size() != n)
      throw std::invalid_argument("PhotonTransport: an empty or inconsistent emission spectrum");
    for (std::size_t i = 0; i < n; ++i)
      if (emission.photon_fraction[i] > 0 &&
          (!(emission.alpha_per_cm[i] > 0) || !(emission.index[i] > 0)))
        bad("absorption coefficient", emission.alpha_per_cm[i],
            "must be > 0 cm^-1 wherever the film emits (at " +
              format_number(emission.energy_eV[i]) + " eV)");
  }

  // One ray per (energy, direction cosine) node: the direction cosine mu
  // of an isotropic emission, both hemispheres folded, is uniform on
  // [0, 1]. The integrals over mu are split at the critical angles of the
  // two interfaces, where the reflectance jumps to 1, and at mu = alpha t.
  std::vector<PhotonTransport::Ray>
  PhotonTransport::make_rays(const FilmOptics &film, const EmissionSpectrum &emission)
  {
    std::vector<Ray> rays;
    const double     t_cm = film.thickness_um * 1e-4;
    for (std::size_t e = 0; e < emission.energy_eV.size(); ++e)
      {
        const double fraction = emission.photon_fraction[e];
        if (!(fraction > 0))
          continue;
        const double        n = emission.index[e];
        std::vector<double> breaks{0, 1};
        for (const double outside : {film.top_index, film.substrate_index})
          if (outside < n)
            breaks.push_back(std::sqrt(1 - (outside / n) * (outside / n)));
        // A thin film (alpha t < 1) changes from transparent to absorbing
        // along grazing paths, over mu ~ alpha t: resolve that too.
        const double alpha_t = emission.alpha_per_cm[e] * t_cm;
        if (alpha_t < 0.5)
          breaks.push_back(alpha_t);
        std::sort(breaks.begin(), breaks.end());
        std::vector<double> mu, w;
        for (std::size_t b = 0; b + 1 < breaks.size(); ++b)
          if (breaks[b + 1] > breaks[b])
            gauss_legendre(film.angle_nodes, breaks[b], breaks[b + 1], mu, w);
        for (std::size_t i = 0; i < mu.size(); ++i)
          {
            Ray ray{};
            ray.weight    = fraction * w[i];
            ray.a         = emission.alpha_per_cm[e] * t_cm / mu[i];
            ray.Rt        = fresnel_reflectance(n, film.top_index, mu[i]);
            ray.Rb        = fresnel_reflectance(n, film.substrate_index, mu[i]);
            ray.tan_theta = std::sqrt(1 - mu[i] * mu[i]) / mu[i];
            ray.bounces       = Bounces(ray.a, ray.Rt, ray.Rb);
            const SlabFates f = ray_fates(ray.a, ray.Rt, ray.Rb);
            fates_.escaped_top += ray.weight * f.escaped_top;
            fates_.lost_substrate += ray.weight * f.lost_substrate;
            rays.push_back(ray);
          }
      }
    // Absorbed is the complement, so that the three fates sum to 1 exactly
    // (the photon fractions sum to 1, and so do the angular weights).
    fates_.absorbed = 1 - fates_.escaped_top - fates_.lost_substrate;
    return rays;
  }

  // T(r): half the probability of absorption at a lateral distance |x - x'|
  // beyond r. First the tail of the in-plane distance rho,
  // P(rho > s) = sum_rays w G(s / (t tan theta)), then its projection on x:
  // for an isotropic azimuth, P(|x| > r) = (2/pi) int_0^{pi/2}
  // P(rho > r / cos psi) dpsi. U(r) = -int_0^r T by the trapezoid rule in
  // ln r (the integrand T r is smooth there).
  void
  PhotonTransport::tabulate_lateral_tail(const std::vector<Ray>          &rays,
                                         const double                     thickness_um,
                                         const std::pair<double, double> &alpha_range)
  {
    // The absorption lengths that matter: leave out the photons of the
    // weakest (sub-gap tail) and strongest absorption that carry less than
    // 1e-10 of the emission each; their fates are still counted exactly,
    // only their lateral spread is cut at r_max.
    const double shortest = 1e4 / alpha_range.second, longest = 1e4 / alpha_range.first;
    r_min_ = 1e-3 * std::min(shortest, thickness_um);
    r_max_ = std::max(40 * longest, 100 * r_min_);
    const int nodes = 2 + int(std::ceil(per_decade_ * std::log10(r_max_ / r_min_)));
    r_.assign(nodes, 0);
    for (int k = 1; k < nodes; ++k)
      r_[k] = r_min_ * std::pow(10.0, double(k - 1) / per_decade_);
    r_max_ = r_.back();

    // In-plane tail; each ray's contribution falls with rho, so stop once
    // it is negligible.
    std::vector<double> radial(nodes, 0);
    for (const Ray &ray : rays)
      for (int k = 0; k < nodes; ++k)
        {
          const double p =
            ray.weight * ray.bounces.absorbed_beyond(r_[k] / (thickness_um * ray.tan_theta));
          radial[k] += p;
          if (p < 1e-20)
            break;
        }
    const auto radial_at = [&](const double s) {
      if (s >= r_max_)
        return 0.0;
      if (s <= r_[1])
        return radial[0] + (radial[1] - radial[0]) * s / r_[1];
      const double pos = per_decade_ * std::log10(s / r_min_);
      const int    k   = std::min(nodes - 2, 1 + int(pos));
      const double f   = std::log(s / r_[k]) / std::log(r_[k + 1] / r_[k]);
      return radial[k] + (radial[k + 1] - radial[k]) * f;
    };

    std::vector<double> psi, w;
    gauss_legendre(64, 0, M_PI / 2, psi, w);
    half_tail_.assign(nodes, 0);
    for (int k = 0; k < nodes; ++k)
      {
        double sum = 0;
        for (std::size_t i = 0; i < psi.size(); ++i)
          sum += w[i] * radial_at(r_[k] / std::cos(psi[i]));
        half_tail_[k] = sum / M_PI; // (1/2)(2/pi) sum
      }
    half_tail_.back() = 0;

    // Tabulated as U(r) = V(r) - V(0) = -int_0^r T, outward from 0: the
    // constant V(0), the mean lateral distance, drops out of every
    // bin-to-bin fraction, and it can exceed the bins by many orders of
    // magnitude (with an Urbach tail narrower than kT the photons of the
    // weakest absorption carry a share that falls more slowly than their
    // reach grows), which would cost every digit of the differences.
    tail_integral_.assign(nodes, 0);
    tail_integral_[1] = -0.5 * (half_tail_[0] + half_tail_[1]) * r_[1];
    for (int k = 2; k < nodes; ++k)
      tail_integral_[k] = tail_integral_[k - 1] - 0.5 * (half_tail_[k - 1] * r_[k - 1] + half_tail_[k] * r_[k]) *
                                                    std::log(r_[k] / r_[k - 1]);
  }

  int
  PhotonTransport::segment(const double r) const
  {
    if (r <= r_[1])
      return 0;
    return std::min(int(r_.size()) - 2, 1 + int(per_decade_ * std::log10(r / r_min_)));
  }

  double
  PhotonTransport::tail_integral(double r) const
  {
    r = std::abs(r);
    if (r >= r_max_)
      return tail_integral_.back();
    const int k = segment(r);
    return hermite(r_[k], r_[k + 1], tail_integral_[k], tail_integral_[k + 1], -half_tail_[k],
                   -half_tail_[k + 1], r);
  }

  double
  PhotonTransport::absorbed_beyond(const double r_um) const
  {
    const double r = std::abs(r_um);
    if (r >= r_max_)
      return 0;
    const int    k = segment(r);
    const double f = (r - r_[k]) / (r_[k + 1] - r_[k]);
    return 2 * (half_tail_[k] + (half_tail_[k + 1] - half_tail_[k]) * f);
  }

  // The images other than the source itself, sum_{m >= 1} U(2mP - y) +
  // U(2mP + y) for y in [0, P]: smooth on the scale of the period, so a
  // uniform grid with cubic Hermite interpolation (slopes from T) is enough.
  // The first pairs are summed; the rest, once they lie more than 128
  // periods away, by the midpoint rule over cells [2mP - P, 2mP + P]:
  // sum_{m > M} f(2mP) = (1/2P) int_{(2M+1)P}^inf f, exact to (2P/l)^2/24
  // for a decay length l, and of size exp(-128 P / l) where that is poor.
  void
  PhotonTransport::tabulate_images()
  {
    const int    n = image_grid_intervals;
    const double h = period_ / n, P = period_;
    images_.assign(n + 1, 0);
    images_slope_.assign(n + 1, 0);
    const auto half_tail_at = [&](const double r) { return 0.5 * absorbed_beyond(r); };
    for (int i = 0; i <= n; ++i)
      {
        const double y = i * h;
        // (Every y sums the same pairs: U tends to a constant, not to 0.)
        for (int m = 1; m <= summed_image_pairs; ++m)
          {
            const double left = 2 * m * P - y, right = 2 * m * P + y;
            images_[i] += tail_integral(left) + tail_integral(right);
            images_slope_[i] += half_tail_at(left) - half_tail_at(right);
          }
        // The rest, (V2(R - y) + V2(R + y)) / 2P with R = (2M + 1) P and
        // V2(r) = int_r^inf V, less
        // its value at y = 0: a constant drops out of every bin-to-bin
        // fraction (they are differences of W), and keeping it costs all
        // digits when photons of a sub-gap tail travel much further than
        // the period (V2(R) ~ reach^2 against bins of nanometres). What
        // remains is y^2 T(R) / 2P to O((y/R)^2) (V2'' = -V' = T).
        const double rest = (2 * summed_image_pairs + 1) * P;
        images_[i] += y * y * half_tail_at(rest) / (2 * P);
        images_slope_[i] += y * half_tail_at(rest) / P;
      }
  }

  double
  PhotonTransport::image_sum(double y) const
  {
    y = std::fmod(std::abs(y), 2 * period_);
    if (y > period_)
      y = 2 * period_ - y;
    const double h = period_ / image_grid_intervals;
    const int    i = std::min(image_grid_intervals - 1, int(y / h));
    return tail_integral(y) + hermite(i * h, (i + 1) * h, images_[i], images_[i + 1],
                                      images_slope_[i], images_slope_[i + 1], y);
  }

  // For a lateral kernel k(x - x') whose tail beyond r is T(r) on each side,
  // the fraction of a source spread uniformly over [a, b] that lands in
  // [c, d] is (1/(b-a)) [Q(d-a) - Q(d-b) - Q(c-a) + Q(c-b)] with
  // Q(s) = A|s|/2 + V(|s|) (Q'' = k; V or U, constants drop out). The linear part survives only on the
  // diagonal (A), and summing V over the images (the source mirrored at 0
  // and shifted by 2mP) gives the even, 2P-periodic image_sum W. The
  // target bins of a column then telescope: every column sums to A.
  void
  PhotonTransport::assemble_operator()
  {
    const std::size_t n = widths_.size();
    const double      A = fates_.absorbed;
    matrix_.assign(n * n, 0);
    // W(e_k - a), W(e_k + a) for the source bin's left edge a, then the
    // same for its right edge b (reused as the next bin's left edge).
    std::vector<double> minus_a(n + 1), plus_a(n + 1), minus_b(n + 1), plus_b(n + 1);
    for (std::size_t k = 0; k <= n; ++k)
      {
        minus_a[k] = image_sum(edges_[k] - edges_[0]);
        plus_a[k]  = image_sum(edges_[k] + edges_[0]);
      }
    for (std::size_t j = 0; j < n; ++j)
      {
        for (std::size_t k = 0; k <= n; ++k)
          {
            minus_b[k] = image_sum(edges_[k] - edges_[j + 1]);
            plus_b[k]  = image_sum(edges_[k] + edges_[j + 1]);
          }
        for (std::size_t i = 0; i < n; ++i)
          {
            const double direct = minus_a[i + 1] - minus_b[i + 1] - minus_a[i] + minus_b[i];
            const double mirror = plus_b[i + 1] - plus_a[i + 1] - plus_b[i] + plus_a[i];
            const double landed = (i == j ? A * widths_[j] : 0.0) + direct + mirror;
            // Fraction landed / width_j; per unit volume: times width_j / width_i.
            matrix_[i * n + j] = landed / widths_[i];
          }
        std::swap(minus_a, minus_b);
        std::swap(plus_a, plus_b);
      }
  }

  double
  PhotonTransport::transfer(const std::size_t to, const std::size_t from) const
  {
    const std::size_t n = widths_.size();
    return matrix_.at(to * n + from) * widths_.at(to) / widths_.at(from);
  }

  std::vector<double>
  PhotonTransport::apply(const std::vector<double> &emission, PhotonBalance &balance) const
  {
    const std::size_t n = widths_.size();
    if (emission.size() != n)
      throw std::invalid_argument("PhotonTransport::apply: " + std::to_string(emission.size()) +
                                  " emission values for " + std::to_string(n) + " bins");
    std::vector<double> generation(n, 0);
    for (std::size_t i = 0; i < n; ++i)
      {
        const double *row = &matrix_[i * n];
        double        sum = 0;
        for (std::size_t j = 0; j < n; ++j)
          sum += row[j] * emission[j];
        generation[i] = sum;
      }
    // Thickness (cm) times the bin-width-weighted mean over the period.
    const double t_cm    = thickness_cm_;
    double       emitted = 0, reabsorbed = 0;
    for (std::size_t i = 0; i < n; ++i)
      {
        emitted += emission[i] * widths_[i];
        reabsorbed += generation[i] * widths_[i];
      }
    balance.emitted        = t_cm * emitted / period_;
    balance.reabsorbed     = t_cm * reabsorbed / period_;
    balance.escaped_top    = fates_.escaped_top * balance.emitted;
    balance.lost_substrate = fates_.lost_substrate * balance.emitted;
    return generation;
  }

  std::size_t
  PhotonTransport::memory_bytes() const
  {
    return sizeof(double) * (matrix_.size() + edges_.size() + widths_.size() + r_.size() +
                             half_tail_.size() + tail_integral_.size() +
                             images_.size() +
                             images_slope_.size());
  }
} // namespace backcomb::fem
