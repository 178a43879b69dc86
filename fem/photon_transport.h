// Photon transport in the absorber film: where the photons emitted by
// radiative recombination go. A photon emitted in the film is re-absorbed
// in it (a new electron-hole pair, possibly far away), escapes through the
// free top surface, or crosses into the substrate. This class returns the
// re-absorbed generation on lateral bins of one electrode period for a
// given emission profile, and the photon balance.
//
// Model (every approximation listed, with where it fails):
//  - Geometry: a film of thickness t between a top medium (index n_top,
//    air by default) and a substrate (n_sub ~ 1.5), laterally uniform and
//    invariant along the finger length y; the period [0, P] repeats by
//    mirror symmetry at x = 0 and x = P, handled by image sources (even and
//    2P-periodic). The fingers and interlayers are NOT modelled: the whole
//    bottom surface is film/substrate. Photons that would meet a finger
//    (reflecting or absorbing) are treated as if they met bare substrate:
//    over a finger this overestimates the substrate loss of a reflecting
//    finger and underestimates the loss of an absorbing one.
//  - Depth: emission uniform through the thickness, generation returned as
//    the thickness average of each bin (the "thin-film kernel"). Fails when
//    the emission is concentrated at one face (e.g. in a thin space-charge
//    layer) and 1/alpha is below t: the escape from near a face differs.
//  - Rays: isotropic emission, geometric (incoherent) optics, no
//    interference, no microcavity change of the emission rate; fails for
//    films much thinner than the wavelength in the film (~0.3 um), where
//    the modes are few and interference matters.
//  - Interfaces: flat; Fresnel reflectance for unpolarised light, the mean
//    of s and p at each bounce (polarisation is not tracked between
//    bounces), with the film's real index n(E) (k neglected at the
//    interface); total internal reflection beyond the critical angles.
//    Rough or textured surfaces scatter light out of the trapped cone and
//    are not described.
//  - What leaves the film does not come back: no reflection from the
//    substrate's far side or from anything above the film. A glass
//    substrate returns part of its light in reality (its back surface
//    reflects ~4 % and traps more by total internal reflection).
//  - Re-absorption along the path with alpha(E), all of it counted as pair
//    generation (no parasitic free-carrier absorption).
//  - One emission spectrum everywhere: the equilibrium (van Roosbroeck-
//    Shockley) shape. Under bias the emission is r0(E) exp(dmu/kT) as long
//    as E - dmu >> kT (non-degenerate carriers), so the shape holds; it
//    fails near degeneracy (dmu within a few kT of the gap) and where the
//    band gap varies across the period.
//
// Coupling (for the solver): apply the operator to the excess emission
// B (n p - n_i^2) per bin. At equilibrium that is zero and so is the net
// radiative rate, to rounding; the equilibrium part B n_i^2 is balanced by
// re-absorption (A) plus the thermal radiation of the surroundings that
// replaces what escapes (1 - A). Uniform emission gives A times itself in
// every bin (translation invariance through the images), to ~1e-11.
//
// Numerics: per photon energy and direction cosine the fates of a photon
// (absorbed, out of the top, into the substrate) are closed-form geometric
// series over the bounces, so that absorbed + escaped + lost = 1 per ray;
// Gauss-Legendre quadrature over the direction cosine with break points at
// the critical angles; the lateral distribution of the absorbed photons is
// tabulated once, projected onto x and integrated twice, so that the bin-
// to-bin fractions are exact differences of one tabulated function. Every
// column of the operator then sums to the slab re-absorption probability
// to rounding, whatever the bins, which makes the photon balance close to
// rounding.
//
// Units: lengths in um, emission and generation in cm^-3 s^-1 (bin
// averages over the bin's width and the film's thickness), balance terms
// in cm^-2 s^-1 per unit footprint of the period.
#pragma once

#include "fem/radiative_emission.h"

#include <cstddef>
#include <utility>
#include <vector>

namespace backcomb::fem
{
  // The film and its surroundings, as the photons see them.
  struct FilmOptics
  {
    double thickness_um     = 0.5;
    double top_index        = 1.0; // medium above the free surface
    double substrate_index  = 1.5; // medium below the film
    // Gauss-Legendre nodes per interval of the direction cosine (the
    // intervals are split at the critical angles and at mu = alpha t).
    int    angle_nodes      = 48;
  };

  // Where the emitted photons go, per unit footprint of the period, in
  // cm^-2 s^-1 (emission and generation integrated over the thickness).
  struct PhotonBalance
  {
    double emitted        = 0;
    double reabsorbed     = 0; // in the film: new pairs
    double escaped_top    = 0; // through the free surface
    double lost_substrate = 0; // into the substrate (fingers count as substrate)
    // emitted minus every fate: zero up to rounding.
    double unbooked() const
    {
      return emitted - reabsorbed - escaped_top - lost_substrate;
    }
    // The photon-recycling probability of the local model, as an output.
    double recycled_fraction() const
    {
      return emitted > 0 ? reabsorbed / emitted : 0;
    }
  };

  // Fates of one photon emitted in a laterally infinite film, averaged over
  // the emission depth (uniform), the directions (isotropic) and the
  // emission spectrum; they sum to 1.
  struct SlabFates
  {
    double absorbed       = 0;
    double escaped_top    = 0;
    double lost_substrate = 0;
  };

  class PhotonTransport
  {
  public:
    // Builds the operator for the lateral bins [edges[i], edges[i+1]] of
    // the period [0, P = edges.back()], edges[0] = 0, strictly increasing.
    // Throws InputError naming the option and value for a bad film or bins.
    PhotonTransport(const FilmOptics        &film,
                    const EmissionSpectrum  &emission,
                    std::vector<double>      bin_edges_um);

    // Re-absorbed generation per bin (cm^-3 s^-1, thickness average) for
    // the emission rate per bin (cm^-3 s^-1, thickness average), and the
    // photon balance. One dense matrix-vector product: cheap enough for
    // every outer iteration of a solve.
    std::vector<double>
    apply(const std::vector<double> &emission, PhotonBalance &balance) const;

    // The fates in a laterally infinite film (no bins involved).
    const SlabFates &
    slab_fates() const
    {
      return fates_;
    }

    // Fraction of the photons emitted in bin `from` that are absorbed in
    // bin `to` (the columns sum to slab_fates().absorbed).
    double
    transfer(std::size_t to, std::size_t from) const;

    // Probability per emitted photon (laterally infinite film) of being
    // absorbed at a lateral distance |x - x'| larger than r, in the
    // direction across the fingers; r in um. 2 T(r) in the notes.
    double
    absorbed_beyond(double r_um) const;

    std::size_t
    bins() const
    {
      return widths_.size();
    }
    // Bytes held by the operator and its tables.
    std::size_t
    memory_bytes() const;

  private:
    struct Ray; // one photon energy and direction cosine with its weight

    void
    check_input(const FilmOptics &film, const EmissionSpectrum &emission) const;
    std::vector<Ray>
    make_rays(const FilmOptics &film, const EmissionSpectrum &emission);
    void
    tabulate_lateral_tail(const std::vector<Ray>          &rays,
                          double                           thickness_um,
                          const std::pair<double, double> &alpha_range);
    void
    tabulate_images();
    void
    assemble_operator();

    // U(r) = V(r) - V(0) = -int_0^r T, with V(r) = int_r^inf T and T(r)
    // half the probability of absorption beyond lateral distance r (cubic
    // Hermite on a logarithmic grid); constant beyond the grid.
    double
    tail_integral(double r_um) const;
    // The interval [r_k, r_k+1] of the grid that holds r.
    int
    segment(double r_um) const;
    // sum over all images m of V(|y - 2 m P|): even and 2P-periodic.
    double
    image_sum(double y_um) const;

    std::vector<double> edges_, widths_;
    double              period_ = 0, thickness_cm_ = 0;
    SlabFates           fates_;

    // Logarithmic grid r_k = r_min 10^((k-1)/per_decade), k >= 1, r_0 = 0.
    double              r_min_ = 0, r_max_ = 0;
    static constexpr int per_decade_ = 60;
    std::vector<double> r_, half_tail_, tail_integral_; // r, T, U

    // sum_{m != 0} V(|y - 2 m P|) on a uniform grid of [0, P], with its
    // derivative, for cubic Hermite interpolation.
    std::vector<double> images_, images_slope_;

    std::vector<double> matrix_; // row-major: generation_i = sum_j M_ij e_j
  };

  // Building blocks, exposed for the tests.
  namespace photon_transport_detail
  {
    // Unpolarised Fresnel reflectance at a flat interface from a medium of
    // index n1 into n2 for the direction cosine mu1 in n1; 1 beyond the
    // critical angle.
    double
    fresnel_reflectance(double n1, double n2, double mu1);

    // For a photon emitted at a uniform depth, going up or down with equal
    // probability at direction cosine mu, with optical depth per pass
    // a = alpha t / mu and reflectances Rt (top), Rb (bottom).
    SlabFates
    ray_fates(double a, double Rt, double Rb);
    // The probability that it is absorbed after an unfolded vertical
    // distance larger than D (in units of t); equals ray_fates().absorbed
    // at D = 0.
    double
    ray_absorbed_beyond(double D_over_t, double a, double Rt, double Rb);

    // The same with what does not depend on D computed once (the lateral
    // tail evaluates it for every ray at hundreds of distances).
    struct Bounces
    {
      Bounces() = default;
      Bounces(double a, double Rt, double Rb);
      double absorbed_beyond(double D_over_t) const;

      double a = 0, Rt = 0, Rb = 0;
      double L = 0, h = 0, e = 0, q = 0, inv = 0; // Rt Rb, mean R, e^{-a}, L e^{-2a}, 1/(1-q)
      double odd_full = 0, even_full = 0;        // absorption in whole passes
    };
  } // namespace photon_transport_detail
} // namespace backcomb::fem
