#include "simulator/device_response.h"

#include "base/errors.h"
#include "base/format.h"
#include "fem/jv_scan.h"
#include "simulator/case_setup.h"

#include <deal.II/distributed/shared_tria.h>

#include <algorithm>
#include <cmath>
#include <limits>

namespace backcomb::simulator
{
  namespace
  {
    constexpr double missing = std::numeric_limits<double>::quiet_NaN();

    std::vector<double>
    sorted_unique(std::vector<double> v)
    {
      std::sort(v.begin(), v.end());
      v.erase(std::unique(v.begin(), v.end(), [](double a, double b) { return std::abs(a - b) < 1e-9; }),
              v.end());
      return v;
    }

    // The current of the converged scan point at each bias, NaN where none.
    std::vector<double>
    currents_at(const fem::JVScan &s, const std::vector<double> &biases)
    {
      std::vector<double> j(biases.size(), missing);
      for (std::size_t i = 0; i < biases.size(); ++i)
        for (const auto &p : s.points)
          if (p.jv.converged && std::abs(p.jv.voltage - biases[i]) < 1e-9)
            j[i] = p.jv.current;
      return j;
    }

    // Linear interpolation of (x, y) at x0, x increasing and x0 within.
    double
    interpolate(const std::vector<double> &x, const std::vector<double> &y, const double x0)
    {
      const auto it = std::lower_bound(x.begin(), x.end(), x0);
      if (it == x.begin())
        return y.front();
      if (it == x.end())
        return y.back();
      const std::size_t i = it - x.begin();
      const double      t = (x0 - x[i - 1]) / (x[i] - x[i - 1]);
      return (1 - t) * y[i - 1] + t * y[i];
    }
  } // namespace

  std::vector<double>
  spectral_collection(const fem::DriftDiffusionSolver &solver, const fem::Generation &g,
                      const dealii::Vector<double> &fc, MPI_Comm comm)
  {
    std::vector<double> acc(g.wavelengths_nm().size(), 0.0);
    for (const auto &p : solver.collection_points(fc))
      g.add_pair_densities(p.x_um, p.y_um, p.weight, acc);
    MPI_Allreduce(MPI_IN_PLACE, acc.data(), int(acc.size()), MPI_DOUBLE, MPI_SUM, comm);
    for (double &a : acc)
      a /= solver.width_um();
    return acc;
  }

  DeviceResponse
  device_response(const Case &c, const ResponseRequest &r, const std::string &scratch, MPI_Comm comm,
                  WarmStart *warm)
  {
    const bool needs_light =
      !r.light_biases.empty() || !r.eqe_wavelengths_nm.empty() || !r.voc_light_factors.empty();
    if (needs_light && !(c.illumination.intensity_suns > 0))
      throw InputError("Illumination/Intensity", format_number(c.illumination.intensity_suns),
                       "the device has light data (J-V under light, EQE or V_oc) but no light");
    const fem::Generation g(c.illumination, c.absorber.band_gap, c.geometry.absorber_thickness_um,
                            finger_layout(c));
    if (!r.eqe_wavelengths_nm.empty())
      {
        const auto &w = g.wavelengths_nm();
        if (w.empty())
          throw InputError("Illumination/Generation model", "",
                           "EQE data needs a spectral generation model (spectrum and optical constants)");
        for (const double l : r.eqe_wavelengths_nm)
          if (l < w.front() - 1e-9 || l > w.back() + 1e-9)
            throw InputError("EQE wavelength", format_number(l),
                             "outside the optical model's wavelengths " + format_number(w.front()) + " .. " +
                               format_number(w.back()) + " nm");
      }

    dealii::parallel::shared::Triangulation<2> tria(comm);
    build_shared_mesh(c, scratch + "/mesh.msh", tria, comm);
    const auto               device = make_device(c, g);
    fem::DriftDiffusionSolver solver(tria, *device, c.numerics);
    const fem::Resume        none;
    const unsigned           halvings = c.numerics.max_halvings;

    DeviceResponse out;
    out.light_current.assign(r.light_biases.size(), missing);
    out.dark_current.assign(r.dark_biases.size(), missing);
    out.eqe.assign(r.eqe_wavelengths_nm.size(), missing);
    out.voc.assign(r.voc_light_factors.size(), missing);

    if (needs_light)
      {
        fem::StepReport on;
        if (warm && warm->light.size() == solver.n_dofs())
          {
            solver.set_state(warm->light, 0.0, 1.0);
            const fem::NewtonReport n = solver.solve(0.0, 1.0);
            on.converged              = n.converged;
            on.newton_iterations      = n.iterations;
          }
        if (!on.converged)
          {
            const unsigned spent = on.newton_iterations;
            on                   = fem::start_state(solver, 1.0, halvings, "light", none);
            on.newton_iterations += spent;
          }
        if (on.converged && warm)
          warm->light = solver.state();
        out.newton += on.newton_iterations;
        if (!on.converged)
          out.failures.push_back("light: " + on.diagnostic);
        else
          {
            fem::JVScan light;
            std::vector<double> biases = r.light_biases;
            biases.push_back(0.0); // the EQE's short circuit
            if (!r.voc_light_factors.empty())
              // The case's positive biases: the scan reaches open circuit
              // (it goes on at most 1 V past its last bias).
              for (double v = c.jv.step; v < c.jv.stop + 1e-9; v += c.jv.step)
                biases.push_back(v);
            fem::scan(solver, sorted_unique(biases), false, 1.0, c.jv.step, halvings, light, {}, "light", none);
            out.light_current = currents_at(light, r.light_biases);
            for (const auto &f : light.failures)
              out.failures.push_back("light: " + f);
            if (!r.eqe_wavelengths_nm.empty() && fem::go_to(solver, light, 0.0, halvings, none))
              {
                const auto eqe = spectral_collection(solver, g, solver.collection_probability(), comm);
                for (std::size_t i = 0; i < out.eqe.size(); ++i)
                  out.eqe[i] = interpolate(g.wavelengths_nm(), eqe, r.eqe_wavelengths_nm[i]);
              }
            if (!r.voc_light_factors.empty())
              {
                // From the open circuit of the full light down (or up):
                // fem::open_circuits.
                const auto           curve = fem::converged_curve(light);
                const fem::JVMetrics m     = fem::jv_metrics(curve);
                if (m.valid && fem::go_to(solver, light, m.Voc, halvings, none))
                  {
                    for (const fem::OpenCircuit &oc : fem::open_circuits(
                           solver, r.voc_light_factors, fem::slope_at_open_circuit(curve), halvings))
                      {
                        out.newton += oc.newton_iterations;
                        if (!oc.converged)
                          {
                            out.failures.push_back("V_oc at light factor " + format_number(oc.light) + ": " +
                                                   oc.diagnostic);
                            break;
                          }
                        for (std::size_t i = 0; i < r.voc_light_factors.size(); ++i)
                          if (r.voc_light_factors[i] == oc.light)
                            out.voc[i] = oc.voltage;
                      }
                  }
                else
                  out.failures.push_back("V_oc: the light J-V has no open circuit");
              }
            out.newton += light.newton;
          }
      }

    if (!r.dark_biases.empty())
      {
        const fem::StepReport eq = fem::start_state(solver, 0.0, halvings, "dark", none);
        out.newton += eq.newton_iterations;
        if (!eq.converged)
          out.failures.push_back("dark: " + eq.diagnostic);
        else
          {
            fem::JVScan dark;
            fem::scan(solver, sorted_unique(r.dark_biases), false, 0.0, c.jv.step, halvings, dark, {}, "dark",
                      none);
            out.dark_current = currents_at(dark, r.dark_biases);
            for (const auto &f : dark.failures)
              out.failures.push_back("dark: " + f);
            out.newton += dark.newton;
          }
      }
    return out;
  }
} // namespace backcomb::simulator
