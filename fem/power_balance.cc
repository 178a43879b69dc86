// Free-energy loss analysis of a converged state (see PowerBalance in
// fem/drift_diffusion.h). Every term is integrated with the quadrature of
// the residual, so that the balance holds to the Newton tolerance: the
// residual of the balance measures the completeness of the accounting, not
// the discretisation error (the mesh-independence tests cover that).
#include "fem/drift_diffusion.h"

#include "fem/edge_flux.h"
#include "geometry/ids.h"

#include <deal.II/base/mpi.h>
#include <deal.II/fe/fe_values.h>

namespace backcomb::fem
{
  using namespace dealii;
  namespace ids = backcomb::geometry::ids;

  double
  PowerBalance::recombination() const
  {
    double sum = top_surface + gap_interface;
    for (const auto &[name, value] : bulk_recombination)
      sum += value;
    return sum;
  }

  PowerBalance
  DriftDiffusionSolver::power_balance() const
  {
    constexpr unsigned c_psi = 0, c_phin = 1, c_phip = 2;
    FEValues<2>     &fv  = *fe_values;
    FEFaceValues<2> &ffv = *fe_face_values;
    const unsigned   dpc = fe.n_dofs_per_cell();
    const unsigned   nq  = cell_quadrature.size();
    std::vector<types::global_dof_index> idx(dpc);

    // Bulk recombination per channel, keyed by the channel's name: every
    // channel that some region has gets its term. Every process must sum
    // the same channel names, also those of regions it owns no cell of.
    std::map<std::string, double> channel;
    for (const auto &[id, region] : device.regions)
      for (const auto &ch : region.channels)
        channel[ch->name()] = 0;

    // Scaled sums; index: input, band edge, Joule n, Joule p, Joule
    // interlayers, top surface, gap interface.
    double sums[7] = {0, 0, 0, 0, 0, 0, 0};
    double recycled = 0; // q int G_recycled dmu, scaled
    const bool fitted = !cell_cache.edge_w.empty();
    for (const auto &cell : dofs.active_cell_iterators())
      {
        if (!cell->is_locally_owned())
          continue;
        const ScaledRegion &r = device.region(cell->material_id());
        fv.reinit(cell);
        cell->get_dof_indices(idx);
        if (fitted)
          {
            // Joule heat of the fitted fluxes: the flux rows times the
            // nodal quasi-Fermi potentials, edge by edge,
            // sum w F_ij (phi_i - phi_j) for each carrier.
            double ul[3][4];
            for (unsigned i = 0; i < dpc; ++i)
              {
                const auto [c, v] = fe.system_to_component_index(i);
                if (c < 3)
                  ul[c][v] = solution[idx[i]];
              }
            EdgeFlux fluxes[6];
            cell_edge_fluxes(&cell_cache.edge_w[cell->active_cell_index() * 6], r.mu_n, r.mu_p, r.a_n, r.a_p,
                             ul[c_psi], ul[c_phin], ul[c_phip], fluxes);
            double jn = 0, jp = 0;
            for (unsigned e = 0; e < 6; ++e)
              {
                const unsigned i = q1_edge_pairs[e][0], j = q1_edge_pairs[e][1];
                jn += fluxes[e].n * (ul[c_phin][i] - ul[c_phin][j]);
                jp += fluxes[e].p * (ul[c_phip][j] - ul[c_phip][i]);
              }
            if (r.absorber)
              sums[2] += jn, sums[3] += jp;
            else
              sums[4] += jn + jp;
          }
        for (unsigned q = 0; q < nq; ++q)
          {
            double       v[4] = {0, 0, 0, 0}; // psi, phi_n, phi_p (, phi_c)
            Tensor<1, 2> g[4];
            for (unsigned i = 0; i < dpc; ++i)
              {
                const unsigned c = fe.system_to_component_index(i).first;
                v[c] += solution[idx[i]] * fv.shape_value(i, q);
                g[c] += solution[idx[i]] * fv.shape_grad(i, q);
              }
            const double n   = std::exp(v[c_psi] - v[c_phin] + r.a_n);
            const double p   = std::exp(v[c_phip] - v[c_psi] + r.a_p);
            const double dmu = v[c_phip] - v[c_phin]; // kT, since np = n_i^2 e^dmu
            const double G   = light_factor * generation_qp[cell->active_cell_index() * nq + q];
            const double dx  = fv.JxW(q);
            sums[0] += G * dmu * dx;
            if (!recycled_qp.empty())
              {
                recycled += recycled_qp[cell->active_cell_index() * nq + q] * dmu * dx;
                if (const RecombinationChannel *rad = columns.radiative[cell->material_id()])
                  recycled += columns.local_share * rad->rate(n, p).R * dmu * dx; // re-absorbed on the spot
              }
            sums[1] += G * 2 * r.half_gap * dx;
            if (!fitted)
              {
                const double jn = r.mu_n * n * g[c_phin].norm_square() * dx;
                const double jp = r.mu_p * p * g[c_phip].norm_square() * dx;
                if (r.absorber)
                  sums[2] += jn, sums[3] += jp;
                else
                  sums[4] += jn + jp;
              }
            for (const auto &ch : r.channels)
              channel[ch->name()] += ch->rate(n, p).R * dmu * dx;
          }

        // Surface channels, summed per surface (top surface, gap
        // interface), whatever channels a surface has.
        for (const unsigned f : cell->face_indices())
          {
            if (!cell->face(f)->at_boundary())
              continue;
            const auto           bid     = cell->face(f)->boundary_id();
            const ScaledSurface *surface = device.surface_at(bid);
            if (!surface || surface->next_to(cell->material_id()).empty())
              continue;
            const auto &channels = surface->next_to(cell->material_id());
            ffv.reinit(cell, f);
            for (unsigned q = 0; q < face_quadrature.size(); ++q)
              {
                double v[4] = {0, 0, 0, 0};
                for (unsigned i = 0; i < dpc; ++i)
                  v[fe.system_to_component_index(i).first] += solution[idx[i]] * ffv.shape_value(i, q);
                const double n = std::exp(v[c_psi] - v[c_phin] + r.a_n);
                const double p = std::exp(v[c_phip] - v[c_psi] + r.a_p);
                sums[bid == ids::top_surface ? 5 : 6] +=
                  surface_rate(channels, n, p).R * (v[c_phip] - v[c_phin]) * ffv.JxW(q);
              }
          }
      }

    // Contacts: the contact-free residual at a contact node is minus the
    // particle flux into the contact there (see terminal_current()). The
    // flux times the quasi-Fermi potential splits into the work done on the
    // external circuit (flux times the metal's potential) and the free
    // energy the carrier gives up crossing the contact.
    Vector<double> res;
    assemble_residual(solution, light_factor, res);
    const double V[2] = {0.0, bias / device.scaling.Vt};
    const std::vector<types::global_dof_index> *list[2] = {electron_contact_dofs, hole_contact_dofs};
    double contact_sums[2][2] = {{0, 0}, {0, 0}}, out = 0;
    for (unsigned k = 0; k < 2; ++k)
      for (const unsigned c : {c_phin, c_phip})
        for (const auto i : list[k][c])
          {
            contact_sums[k][c - 1] -= (solution[i] - V[k]) * res[i];
            out -= V[k] * res[i];
          }

    const double scale = device.scaling.J0 * device.scaling.Vt / width; // mW/cm^2
    PowerBalance b;
    b.bias_V            = bias;
    b.current           = terminal_current().total();
    b.input             = Utilities::MPI::sum(sums[0], comm) * scale;
    b.band_edge_input   = Utilities::MPI::sum(sums[1], comm) * scale;
    b.joule_electrons   = Utilities::MPI::sum(sums[2], comm) * scale;
    b.joule_holes       = Utilities::MPI::sum(sums[3], comm) * scale;
    b.joule_interlayers = Utilities::MPI::sum(sums[4], comm) * scale;
    b.top_surface       = Utilities::MPI::sum(sums[5], comm) * scale;
    b.gap_interface     = Utilities::MPI::sum(sums[6], comm) * scale;
    b.output            = Utilities::MPI::sum(out, comm) * scale;
    for (unsigned k = 0; k < 2; ++k)
      for (unsigned c = 0; c < 2; ++c)
        b.contact[k][c] = Utilities::MPI::sum(contact_sums[k][c], comm) * scale;
    for (const auto &[name, value] : channel)
      b.bulk_recombination[name] = Utilities::MPI::sum(value, comm) * scale;
    if (recycling)
      {
        b.recycled_input = Utilities::MPI::sum(recycled, comm) * scale;
        b.bulk_recombination["radiative"] -= b.recycled_input;
      }
    return b;
  }
} // namespace backcomb::fem
