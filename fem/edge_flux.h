// Exponentially fitted carrier fluxes along the edges of a cell: the
// edge-averaged finite elements of J. Xu and L. Zikatanov, Math. Comp. 68
// (1999) 1429, which on an edge reduce to the Scharfetter-Gummel flux
// (D. L. Scharfetter and H. K. Gummel, IEEE Trans. Electron Devices 16
// (1969) 64).
//
// In the Slotboom variable u = exp(-phi_n) the electron flux mu n grad
// phi_n is -mu exp(psi + a_n) grad u: a diffusion with a coefficient that
// varies exponentially. The Galerkin form sum_j K_ij (u_j - u_i) alpha is
// kept, with alpha on each edge (i, j) replaced by its harmonic mean along
// the edge for psi linear there; this is exact for the one-dimensional
// current-carrying solution along the edge, whatever the cell size. The
// stiffness K is that of the Q1 element with the vertex (trapezoidal)
// rule: on a rectangle it couples only the four sides, with weights
// h_y / (2 h_x) and h_x / (2 h_y), the box-method stencil, so the scheme
// is monotone at any aspect ratio.
//
// Everything is in the solver's scaled units (potentials in kT/q).
#pragma once

#include <cmath>

namespace backcomb::fem
{
  // The vertex pairs of a Q1 cell (deal.II's vertex numbering): its four
  // sides and two diagonals, whose weights vanish on a rectangle.
  constexpr unsigned q1_edge_pairs[6][2] = {{0, 1}, {0, 2}, {0, 3}, {1, 2}, {1, 3}, {2, 3}};

  // Bernoulli function B(x) = x / (e^x - 1) and its derivative.
  inline double
  bernoulli(const double x)
  {
    if (std::abs(x) < 1e-4)
      return 1 - x / 2 + x * x / 12;
    if (x > 700)
      return x * std::exp(-x);
    return x / std::expm1(x);
  }

  inline double
  bernoulli_derivative(const double x)
  {
    if (std::abs(x) < 1e-2)
      return -0.5 + x / 6 - x * x * x / 180;
    const double b = bernoulli(x);
    return b * (1 - b) / x - b;
  }

  // The electron and hole particle fluxes along one edge from vertex j to
  // vertex i (positive when the carriers' quasi-Fermi potential falls from
  // i to j, like mu n grad phi_n . (x_j - x_i)), times the edge's weight,
  // and their derivatives with respect to the nodal unknowns.
  struct EdgeFlux
  {
    // Electrons: w mu_n (n_j B(d) - n_i B(-d)), d = psi_j - psi_i.
    double n = 0, dn_dpsi_i = 0, dn_dpsi_j = 0, dn_dphin_i = 0, dn_dphin_j = 0;
    // Holes: w mu_p (p_j B(-d) - p_i B(d)).
    double p = 0, dp_dpsi_i = 0, dp_dpsi_j = 0, dp_dphip_i = 0, dp_dphip_j = 0;
  };

  // n_i, n_j, p_i, p_j: the nodal densities of the cell's region; psi_i,
  // psi_j: the nodal potentials; w: the edge weight -K_ij.
  inline EdgeFlux
  edge_flux(const double w, const double mu_n, const double mu_p, const double psi_i, const double psi_j,
            const double n_i, const double n_j, const double p_i, const double p_j)
  {
    const double d = psi_j - psi_i;
    const double bp = bernoulli(d), bm = bernoulli(-d);
    const double dbp = bernoulli_derivative(d), dbm = bernoulli_derivative(-d);
    const double cn = w * mu_n, cp = w * mu_p;
    EdgeFlux     e;
    e.n          = cn * (n_j * bp - n_i * bm);
    e.dn_dpsi_i  = cn * (-n_i * bm - n_j * dbp - n_i * dbm);
    e.dn_dpsi_j  = cn * (n_j * bp + n_j * dbp + n_i * dbm);
    e.dn_dphin_i = cn * n_i * bm;
    e.dn_dphin_j = -cn * n_j * bp;
    e.p          = cp * (p_j * bm - p_i * bp);
    e.dp_dpsi_i  = cp * (p_j * dbm + p_i * bp + p_i * dbp);
    e.dp_dpsi_j  = cp * (-p_j * bm - p_j * dbm - p_i * dbp);
    e.dp_dphip_i = -cp * p_i * bp;
    e.dp_dphip_j = cp * p_j * bm;
    return e;
  }

  // The fluxes of a cell's six vertex pairs (q1_edge_pairs) from its edge
  // weights w, its region's mobilities and density offsets (n = exp(psi -
  // phi_n + a_n), p = exp(phi_p - psi + a_p)) and the nodal potentials;
  // zero where a weight is.
  inline void
  cell_edge_fluxes(const double *w, const double mu_n, const double mu_p, const double a_n, const double a_p,
                   const double *psi, const double *phin, const double *phip, EdgeFlux (&out)[6])
  {
    double n[4], p[4];
    for (unsigned k = 0; k < 4; ++k)
      {
        n[k] = std::exp(psi[k] - phin[k] + a_n);
        p[k] = std::exp(phip[k] - psi[k] + a_p);
      }
    for (unsigned e = 0; e < 6; ++e)
      {
        const unsigned i = q1_edge_pairs[e][0], j = q1_edge_pairs[e][1];
        out[e] = w[e] == 0 ? EdgeFlux() : edge_flux(w[e], mu_n, mu_p, psi[i], psi[j], n[i], n[j], p[i], p[j]);
      }
  }
} // namespace backcomb::fem
