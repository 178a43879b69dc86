// VTK field output of a converged state: potentials, quasi-Fermi levels,
// densities, current densities, field strength, generation and
// recombination, in interface units (names carry the unit).
#include "fem/drift_diffusion.h"

#include "fem/physics/registry.h"

#include <deal.II/base/mpi.h>
#include <deal.II/numerics/data_out.h>
#include <deal.II/numerics/data_postprocessor.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <fstream>

namespace backcomb::fem
{
  using namespace dealii;

  namespace
  {
    class DerivedFields : public DataPostprocessor<2>
    {
    public:
      DerivedFields(const DeviceModel &d, double light)
        : device(d)
        , light(light)
        , channel_names(bulk_recombination_channels().names())
        , ions(d.has_ions())
      {
        // One field per registered bulk channel, named by the channel, in
        // registry order (the same on every process, whatever regions it
        // owns); a channel a region lacks reads 0 there.
        for (const std::string &name : channel_names)
          channel_fields.push_back(bulk_recombination_channels().create(name)->field_name());
      }

      std::vector<std::string>
      get_names() const override
      {
        std::vector<std::string> names = {"electrostatic_potential_V",
                                          "electron_quasi_fermi_level_eV",
                                          "hole_quasi_fermi_level_eV",
                                          "electron_density_per_cm3",
                                          "hole_density_per_cm3",
                                          "electron_current_density_mA_per_cm2",
                                          "electron_current_density_mA_per_cm2",
                                          "hole_current_density_mA_per_cm2",
                                          "hole_current_density_mA_per_cm2",
                                          "current_density_mA_per_cm2",
                                          "current_density_mA_per_cm2",
                                          "electric_field_strength_V_per_cm",
                                          "generation_rate_per_cm3_s",
                                          "recombination_rate_per_cm3_s",
                                          "quasi_fermi_level_splitting_eV"};
        names.insert(names.end(), channel_fields.begin(), channel_fields.end());
        if (ions)
          {
            names.push_back("mobile_ion_density_per_cm3");
            names.push_back("ionic_space_charge_per_cm3"); // z (c - N_ion)
          }
        return names;
      }

      std::vector<DataComponentInterpretation::DataComponentInterpretation>
      get_data_component_interpretation() const override
      {
        using I = DataComponentInterpretation::DataComponentInterpretation;
        const I        s = DataComponentInterpretation::component_is_scalar;
        const I        v = DataComponentInterpretation::component_is_part_of_vector;
        std::vector<I> out = {s, s, s, s, s, v, v, v, v, v, v, s, s, s, s};
        out.insert(out.end(), channel_fields.size() + (ions ? 2 : 0), s);
        return out;
      }

      UpdateFlags
      get_needed_update_flags() const override
      {
        return update_values | update_gradients | update_quadrature_points;
      }

      void
      evaluate_vector_field(const DataPostprocessorInputs::Vector<2> &in,
                            std::vector<Vector<double>> &out) const override
      {
        const auto         cell = in.template get_cell<2>();
        const ScaledRegion &r   = device.region(cell->material_id());
        const Scaling      &s   = device.scaling;
        for (unsigned q = 0; q < in.solution_values.size(); ++q)
          {
            const auto  &u = in.solution_values[q];
            const auto  &g = in.solution_gradients[q];
            const double n = std::exp(u[0] - u[1] + r.a_n);
            const double p = std::exp(u[2] - u[0] + r.a_p);
            // Total and per channel (a channel a region lacks reads 0).
            Rate                k;
            std::vector<double> channel(channel_names.size(), 0.0);
            for (const auto &ch : r.channels)
              {
                const double rate = ch->rate(n, p).R;
                k.R += rate;
                const auto at = std::find(channel_names.begin(), channel_names.end(), ch->name());
                channel[at - channel_names.begin()] += rate;
              }
            const Tensor<1, 2> Jn = -r.mu_n * n * g[1] * s.J0;
            const Tensor<1, 2> Jp = -r.mu_p * p * g[2] * s.J0;
            auto &o = out[q];
            o(0)  = u[0] * s.Vt;
            o(1)  = -u[1] * s.Vt;
            o(2)  = -u[2] * s.Vt;
            o(3)  = n * s.N0;
            o(4)  = p * s.N0;
            o(5)  = Jn[0], o(6) = Jn[1];
            o(7)  = Jp[0], o(8) = Jp[1];
            o(9)  = Jn[0] + Jp[0], o(10) = Jn[1] + Jp[1];
            o(11) = g[0].norm() * s.Vt / s.L0;
            const auto &x = in.evaluation_points[q];
            o(12) = (r.absorber && device.generation) ? light * device.generation(x[0], x[1]) : 0.0;
            o(13) = k.R * s.R0;
            o(14) = o(1) - o(2); // E_Fn - E_Fp
            for (unsigned c = 0; c < channel.size(); ++c)
              o(15 + c) = channel[c] * s.R0;
            if (ions)
              {
                // 0 outside the ion region.
                const double c = r.ion_density > 0 ? r.ion_density * std::exp(r.ion_z * (u[3] - u[0])) : 0.0;
                o(15 + channel.size())     = c * s.N0;
                o(15 + channel.size() + 1) = r.ion_z * (c - r.ion_density) * s.N0;
              }
          }
      }

    private:
      const DeviceModel       &device;
      double                   light;
      std::vector<std::string> channel_names;  // registry names
      std::vector<std::string> channel_fields; // their VTK field names
      bool                     ions;
    };

    // The adjoint collection probability (a nodal vector of the system:
    // f_c in component 0, its electron- and hole-equation parts in 1 and
    // 2) and the dead-zone mask, 1 in the absorber where f_c is below the
    // threshold and 0 elsewhere (interlayers have no generation and so no
    // dead zone).
    class CollectionFields : public DataPostprocessor<2>
    {
    public:
      CollectionFields(const DeviceModel &d, double threshold)
        : device(d)
        , threshold(threshold)
      {}

      std::vector<std::string>
      get_names() const override
      {
        return {"collection_probability", "collection_probability_electron_equation_part",
                "collection_probability_hole_equation_part", "dead_zone_mask"};
      }

      std::vector<DataComponentInterpretation::DataComponentInterpretation>
      get_data_component_interpretation() const override
      {
        return std::vector<DataComponentInterpretation::DataComponentInterpretation>(
          4, DataComponentInterpretation::component_is_scalar);
      }

      UpdateFlags
      get_needed_update_flags() const override
      {
        return update_values;
      }

      void
      evaluate_vector_field(const DataPostprocessorInputs::Vector<2> &in,
                            std::vector<Vector<double>> &out) const override
      {
        const bool absorber = device.region(in.template get_cell<2>()->material_id()).absorber;
        for (unsigned q = 0; q < in.solution_values.size(); ++q)
          {
            const auto &fc = in.solution_values[q];
            out[q](0)      = fc[0];
            out[q](1)      = fc[1];
            out[q](2)      = fc[2];
            out[q](3)      = (absorber && fc[0] < threshold) ? 1.0 : 0.0;
          }
      }

    private:
      const DeviceModel &device;
      double             threshold;
    };
  } // namespace

  void
  DriftDiffusionSolver::write_fields(const std::string &vtu_file, const Vector<double> *fc,
                                     const double threshold) const
  {
    DerivedFields derived(device, light_factor);
    DataOut<2>    out;
    out.attach_dof_handler(dofs);
    out.add_data_vector(solution, derived);
    Vector<float> region(tria.n_active_cells()), absorber(tria.n_active_cells());
    for (const auto &cell : tria.active_cell_iterators())
      {
        region[cell->active_cell_index()]   = cell->material_id();
        absorber[cell->active_cell_index()] = device.region(cell->material_id()).absorber ? 1 : 0;
      }
    out.add_data_vector(region, "region_id");
    out.add_data_vector(absorber, "in_absorber");
    // Photon recycling as transport: the re-absorbed generation, uniform
    // over each column's thickness (cell data).
    Vector<float> recycled;
    if (recycling)
      {
        recycled.reinit(tria.n_active_cells());
        const std::vector<double> per_column = recycled_generation();
        for (const auto &cell : tria.active_cell_iterators())
          if (const int c = columns.of_cell[cell->active_cell_index()]; c >= 0)
            recycled[cell->active_cell_index()] = per_column[c] / (columns.thickness_um[c] * 1e-4);
        out.add_data_vector(recycled, "recycled_generation_rate_per_cm3_s");
      }
    CollectionFields collection(device, threshold);
    if (fc)
      out.add_data_vector(*fc, collection);
    out.build_patches();
    // zlib's fastest level: best_compression, deal.II's default, took about
    // 0.1 s more per file of the short-film case at 50 um for files 11 %
    // smaller (363 kB against 405 kB).
    DataOutBase::VtkFlags flags;
    flags.compression_level = DataOutBase::VtkFlags::best_speed;
    out.set_flags(flags);
    // Atomic: all processes write one temporary file next to the target
    // (MPI I/O), then the first renames it.
    const std::string tmp = vtu_file + ".tmp";
    try
      {
        out.write_vtu_in_parallel(tmp, comm);
      }
    catch (const std::exception &)
      {
        if (Utilities::MPI::this_mpi_process(comm) == 0)
          std::filesystem::remove(tmp);
        throw std::runtime_error("cannot write " + vtu_file);
      }
    MPI_Barrier(comm);
    if (Utilities::MPI::this_mpi_process(comm) == 0)
      std::filesystem::rename(tmp, vtu_file);
    MPI_Barrier(comm);
  }
} // namespace backcomb::fem
