#include "study/calibration.h"

#include "base/errors.h"
#include "base/files.h"
#include "base/format.h"
#include "base/json_file.h"
#include "base/text.h"
#include "postprocess/plots.h"
#include "simulator/case_file.h"
#include "simulator/device_response.h"
#include "study/measured.h"

#include <deal.II/base/mpi.h>
#include <deal.II/lac/lapack_full_matrix.h>

#include <nlohmann/json.hpp>
#include <petsctao.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <sstream>
#include <unistd.h>

namespace backcomb::study
{
  using json = nlohmann::json;

  double
  FittedEntry::to_unit(const double value) const
  {
    return log ? (std::log10(value) - std::log10(low)) / (std::log10(high) - std::log10(low))
               : (value - low) / (high - low);
  }

  double
  FittedEntry::from_unit(const double u) const
  {
    const double t = std::clamp(u, 0.0, 1.0);
    return log ? std::pow(10.0, std::log10(low) + t * (std::log10(high) - std::log10(low))) : low + t * (high - low);
  }

  FittedEntry
  parse_fitted_entry(const std::string &text)
  {
    const auto eq = text.find('=');
    if (eq == std::string::npos || eq == 0)
      throw InputError("--fit", text, "expected \"Section/Name=LOW:HIGH\" or \"Section/Name=LOW:HIGH:log\"");
    FittedEntry e;
    e.path = text.substr(0, eq);
    std::vector<std::string> parts;
    std::stringstream        s(text.substr(eq + 1));
    for (std::string p; std::getline(s, p, ':');)
      parts.push_back(p);
    if (parts.size() < 2 || parts.size() > 3)
      throw InputError("--fit " + e.path, text.substr(eq + 1), "the bounds are LOW:HIGH, optionally :log or :linear");
    auto bound = [&](const std::string &p) {
      char        *end = nullptr;
      const double v   = std::strtod(p.c_str(), &end);
      if (p.empty() || end != p.c_str() + p.size() || !std::isfinite(v))
        throw InputError("--fit " + e.path, p, "a bound must be a finite number");
      return v;
    };
    e.low  = bound(parts[0]);
    e.high = bound(parts[1]);
    if (!(e.high > e.low))
      throw InputError("--fit " + e.path, text.substr(eq + 1), "the upper bound must exceed the lower bound");
    e.log = e.low > 0 && e.high >= 10 * e.low;
    if (parts.size() == 3)
      {
        if (parts[2] == "log")
          e.log = true;
        else if (parts[2] == "linear")
          e.log = false;
        else
          throw InputError("--fit " + e.path, parts[2], "the scaling is 'log' or 'linear'");
      }
    if (e.log && !(e.low > 0))
      throw InputError("--fit " + e.path, text.substr(eq + 1), "logarithmic scaling needs bounds > 0");
    return e;
  }

  void
  parse_loss(const std::string &text, CalibrationOptions &o)
  {
    const auto        colon = text.find(':');
    const std::string name  = text.substr(0, colon);
    if (name == "none")
      o.loss = RobustLoss::none;
    else if (name == "huber")
      o.loss = RobustLoss::huber;
    else if (name == "cauchy")
      o.loss = RobustLoss::cauchy;
    else
      throw InputError("--loss", text, "one of none, huber[:SCALE], cauchy[:SCALE]");
    if (colon != std::string::npos)
      {
        const std::string scale = text.substr(colon + 1);
        char             *end   = nullptr;
        const double      v     = std::strtod(scale.c_str(), &end);
        if (scale.empty() || end != scale.c_str() + scale.size() || !std::isfinite(v) || !(v > 0))
          throw InputError("--loss", text, "the scale (in standard deviations) must be a number > 0");
        o.loss_scale = v;
      }
  }

  namespace
  {
    // A residual the model has no value for (no converged state) counts
    // as this many standard deviations off.
    constexpr double missing_residual = 100.0;

    // The fit has converged when an iteration moved every unit variable by
    // less than this (the data no longer move the fit; with noise-free
    // data the cost then sits at the solver's round-off).
    constexpr double step_tolerance = 1e-7;

    // Forward-difference step in the optimiser's unit variable.
    constexpr double fd_step = 1e-4;

    // One device: the overrides that make it and what is asked of it.
    struct Device
    {
      std::vector<std::string>   overrides; // the data file's device lines
      simulator::ResponseRequest request;
      double                     intensity_suns = 1;
      std::vector<std::size_t>   sets; // indices of its data sets
    };

    std::string
    exact(const double v)
    {
      char text[40];
      std::snprintf(text, sizeof text, "%.17g", v);
      return text;
    }

    class Calibration;
    // What TAO hands back to a callback: one small record per callback,
    // not the Calibration itself (with the Calibration's own address as
    // the context, a byte of its state changed during TAO's set-up; the
    // cause was not found, and with these records it does not happen).
    struct TaoContext
    {
      Calibration *self;
    };

    // The whole calibration, on every rank; rank 0 drives TAO.
    class Calibration
    {
    public:
      Calibration(const CalibrationOptions &o, MPI_Comm comm);
      int run();

    private:
      void read_inputs();
      void open_cache();
      std::vector<std::string> overrides_at(const Device &d, const std::vector<double> &u) const;
      // Model values of every data point (set by set) at each u; rank 0
      // calls it, the other ranks serve it.
      std::vector<std::vector<double>> predict(const std::vector<std::vector<double>> &us);
      std::vector<std::vector<double>> solve_batch(const std::vector<std::vector<double>> &us);
      void                             serve();
      std::vector<double>              residuals(const std::vector<double> &model) const;
      double                           robust(double r, double &slope) const;
      std::vector<double>              robust_residuals(const std::vector<double> &raw) const;
      // J (row-major, m x p) of the raw residuals at u.
      std::vector<double> jacobian(const std::vector<double> &u);
      void                finish(const std::vector<double> &u, int reason, unsigned iterations);

      static PetscErrorCode tao_residual(Tao, Vec x, Vec f, void *ctx);
      static PetscErrorCode tao_jacobian(Tao, Vec x, Mat J, Mat, void *ctx);
      static PetscErrorCode tao_monitor(Tao tao, void *ctx);
      std::vector<double>   monitor_u;  // of the last progress line
      Tao                   inner = nullptr; // TAOBRGN's inner solver

      const CalibrationOptions &o;
      MPI_Comm                  comm;
      const bool                root;
      std::string               case_text;
      std::vector<FittedEntry>  entries;
      std::vector<std::string>  common; // --set without the fitted entries
      std::vector<MeasuredSet>  sets;
      std::vector<double>       sigma; // per set, internal unit
      bool                      sigma_given = true;
      std::vector<Device>       devices;
      // Per device, this rank's last state under light: the first guess of
      // its next solve of that device.
      std::vector<simulator::WarmStart> warm;
      std::size_t               n_points = 0;
      std::string               fingerprint;

      std::map<std::vector<double>, std::vector<double>> cache; // u -> model values
      std::unique_ptr<std::FILE, int (*)(std::FILE *)>     cache_file{nullptr, std::fclose};
      unsigned solves = 0, replayed = 0;
      json     history = json::array();
      std::chrono::steady_clock::time_point start = std::chrono::steady_clock::now();
      std::exception_ptr error;
    };

    Calibration::Calibration(const CalibrationOptions &o_, MPI_Comm c)
      : o(o_)
      , comm(c)
      , root(dealii::Utilities::MPI::this_mpi_process(c) == 0)
    {}

    void
    Calibration::read_inputs()
    {
      if (o.data_files.empty())
        throw InputError("calibrate: no --data FILE given: the fit needs measured data");
      if (o.fit.empty())
        throw InputError("calibrate: no --fit \"Section/Name=LOW:HIGH\" given: nothing to fit");
      const simulator::Case base = simulator::read_case(o.case_file, o.sets);
      case_text                  = base.echo;
      for (const auto &f : o.fit)
        {
          FittedEntry e = parse_fitted_entry(f);
          if (const std::string why = simulator::unknown_entry_reason(e.path); !why.empty())
            throw InputError("--fit " + e.path, f, why);
          for (const auto &other : entries)
            if (other.path == e.path)
              throw InputError("--fit " + e.path, f, "fitted twice");
          if (e.path == "Illumination/Intensity")
            throw InputError("--fit " + e.path, f, "the light intensity of a device is set by its data file");
          const std::string value = simulator::entry_value(base, e.path);
          char             *end   = nullptr;
          e.start                 = std::strtod(value.c_str(), &end);
          if (value.empty() || end != value.c_str() + value.size())
            throw InputError("--fit " + e.path, value, "not a numeric entry; only numbers can be fitted");
          if (e.start < e.low || e.start > e.high)
            throw InputError("--fit " + e.path, f,
                             "the case's value " + value + " (the start of the fit) is outside the bounds");
          for (const double v : {e.low, e.high})
            {
              std::vector<std::string> ov;
              for (const auto &x : o.sets)
                if (simulator::split_override(x).first != e.path)
                  ov.push_back(x);
              ov.push_back(e.path + "=" + exact(v));
              try
                {
                  simulator::read_case(o.case_file, ov);
                }
              catch (const InputError &x)
                {
                  throw InputError("--fit " + e.path, f, std::string("a bound is not a valid value: ") + x.what());
                }
            }
          entries.push_back(e);
        }

      // --set of a fitted entry gives its start value; the devices get
      // the fitted value instead.
      for (const auto &x : o.sets)
        if (std::none_of(entries.begin(), entries.end(),
                         [&](const FittedEntry &e) { return e.path == simulator::split_override(x).first; }))
          common.push_back(x);

      for (const auto &file : o.data_files)
        {
          MeasuredSet s = read_measured(file);
          for (const auto &d : s.device)
            {
              const std::string path = simulator::split_override(d).first;
              for (const auto &e : entries)
                if (e.path == path)
                  throw InputError(file, d, "the device line sets a fitted entry (" + path + ")");
            }
          sets.push_back(std::move(s));
        }

      // Devices: data sets with the same device lines share one solve.
      for (std::size_t k = 0; k < sets.size(); ++k)
        {
          std::vector<std::string> key = sets[k].device;
          std::sort(key.begin(), key.end());
          auto it = std::find_if(devices.begin(), devices.end(), [&](const Device &d) {
            auto other = d.overrides;
            std::sort(other.begin(), other.end());
            return other == key;
          });
          if (it == devices.end())
            {
              devices.push_back({});
              it            = std::prev(devices.end());
              it->overrides = sets[k].device;
              std::vector<std::string> ov = o.sets;
              ov.insert(ov.end(), it->overrides.begin(), it->overrides.end());
              try
                {
                  const simulator::Case c = simulator::read_case(o.case_file, ov);
                  it->intensity_suns      = c.illumination.intensity_suns;
                }
              catch (const InputError &x)
                {
                  throw InputError(sets[k].file + ": its device lines do not make a valid case: " +
                                   std::string(x.what()));
                }
            }
          it->sets.push_back(k);
          auto &r = it->request;
          auto &s = sets[k];
          switch (s.kind)
            {
              case DataKind::light_jv:
                r.light_biases.insert(r.light_biases.end(), s.x.begin(), s.x.end());
                break;
              case DataKind::dark_jv:
                r.dark_biases.insert(r.dark_biases.end(), s.x.begin(), s.x.end());
                break;
              case DataKind::eqe:
                r.eqe_wavelengths_nm.insert(r.eqe_wavelengths_nm.end(), s.x.begin(), s.x.end());
                break;
              case DataKind::voc_vs_light:
                if (!(it->intensity_suns > 0))
                  throw InputError(s.file + ": Voc vs light data for a device without light (Illumination/Intensity = 0)");
                for (const double x : s.x)
                  r.voc_light_factors.push_back(x / it->intensity_suns);
                break;
            }
          n_points += s.x.size();
        }
      warm.resize(devices.size());
      if (n_points <= entries.size())
        throw InputError("calibrate: " + std::to_string(n_points) + " data points for " +
                         std::to_string(entries.size()) +
                         " fitted entries; a fit needs more points than entries");

      // Noise: declared per set, or a default (common practice, no source).
      for (const auto &s : sets)
        {
          if (s.sigma)
            sigma.push_back(*s.sigma);
          else
            {
              sigma_given = false;
              double scale = 0;
              for (const double y : s.y)
                scale = std::max(scale, std::abs(y));
              sigma.push_back(s.kind == DataKind::eqe            ? 0.01
                              : s.kind == DataKind::voc_vs_light ? 1e-3
                                                                 : std::max(1e-2 * scale, 1e-12));
            }
        }

      // What identifies this calibration: its evaluations can be replayed.
      std::vector<std::string> ident = o.sets;
      for (const auto &f : o.fit)
        ident.push_back("fit " + f);
      for (const auto &s : sets)
        ident.push_back("data " + s.text);
      fingerprint = result_fingerprint(case_text, ident);
    }

    // FOLDER/evaluations.jsonl: a header line, then one line per model
    // evaluation. Lines of an earlier run with the same fingerprint are
    // taken; a damaged last line (a kill while writing) is dropped.
    void
    Calibration::open_cache()
    {
      const std::string path = o.folder + "/evaluations.jsonl";
      std::ifstream     in(path);
      std::string       kept;
      if (in)
        {
          std::string line;
          std::getline(in, line);
          json head;
          try
            {
              head = json::parse(line);
            }
          catch (const std::exception &)
            {
            }
          if (!head.is_object() || head.value("fingerprint", "") != fingerprint)
            throw InputError(path + ": evaluations of a different calibration (case, --set, --fit or data "
                                    "changed); choose another --out folder or delete this file");
          kept = line + "\n";
          while (std::getline(in, line))
            try
              {
                const json j = json::parse(line);
                cache[j.at("u").get<std::vector<double>>()] = j.at("model").get<std::vector<double>>();
                kept += line + "\n";
              }
            catch (const std::exception &)
              {
                break;
              }
        }
      else
        kept = json{{"fingerprint", fingerprint}, {"backcomb_version", program_version()}}.dump() + "\n";
      write_file_atomically(path, kept);
      cache_file.reset(std::fopen(path.c_str(), "a"));
      if (!cache_file)
        throw OutputError(path + ": cannot open for appending");
      if (!cache.empty() && !o.quiet)
        std::printf("calibrate: %zu evaluations of an earlier run found in %s; replaying them\n", cache.size(),
                    path.c_str());
    }

    std::vector<std::string>
    Calibration::overrides_at(const Device &d, const std::vector<double> &u) const
    {
      std::vector<std::string> ov = common;
      ov.insert(ov.end(), d.overrides.begin(), d.overrides.end());
      for (std::size_t k = 0; k < entries.size(); ++k)
        ov.push_back(entries[k].path + "=" + exact(entries[k].from_unit(u[k])));
      return ov;
    }

    // Every (u, device) pair is one task; rank r takes tasks r, r + n, ...
    std::vector<std::vector<double>>
    Calibration::solve_batch(const std::vector<std::vector<double>> &us)
    {
      const unsigned rank = dealii::Utilities::MPI::this_mpi_process(comm);
      const unsigned size = dealii::Utilities::MPI::n_mpi_processes(comm);
      const std::string scratch = o.folder + "/scratch-rank" + std::to_string(rank);
      std::vector<std::vector<double>> mine;
      const std::size_t                n_tasks = us.size() * devices.size();
      for (std::size_t t = rank; t < n_tasks; t += size)
        {
          const Device &d = devices[t % devices.size()];
          simulator::DeviceResponse r;
          try
            {
              make_folder(scratch);
              const simulator::Case c = simulator::read_case(o.case_file, overrides_at(d, us[t / devices.size()]));
              r = simulator::device_response(c, d.request, scratch, MPI_COMM_SELF, &warm[t % devices.size()]);
            }
          catch (const std::exception &e)
            {
              r.failures.push_back(e.what());
            }
          const std::size_t expected = d.request.light_biases.size() + d.request.dark_biases.size() +
                                       d.request.eqe_wavelengths_nm.size() + d.request.voc_light_factors.size();
          std::vector<double> flat;
          for (const auto *v : {&r.light_current, &r.dark_current, &r.eqe, &r.voc})
            flat.insert(flat.end(), v->begin(), v->end());
          if (flat.size() != expected) // the solve threw before it answered
            flat.assign(expected, std::nan(""));
          mine.push_back(std::move(flat));
        }
      // Everyone gets every task's values, in task order.
      const auto all = dealii::Utilities::MPI::all_gather(comm, mine);
      std::vector<std::vector<double>> tasks(n_tasks);
      for (unsigned r = 0; r < size; ++r)
        for (std::size_t i = 0; i < all[r].size(); ++i)
          tasks[r + i * size] = all[r][i];
      // Per u: the model values of every set, in set order.
      std::vector<std::vector<double>> out(us.size());
      for (std::size_t i = 0; i < us.size(); ++i)
        {
          std::vector<std::vector<double>> per_set(sets.size());
          for (std::size_t k = 0; k < devices.size(); ++k)
            {
              const Device &d    = devices[k];
              const auto   &flat = tasks[i * devices.size() + k];
              std::size_t   light = 0, dark = d.request.light_biases.size(),
                          eqe = dark + d.request.dark_biases.size(), voc = eqe + d.request.eqe_wavelengths_nm.size();
              for (const std::size_t s : d.sets)
                {
                  std::size_t &at = sets[s].kind == DataKind::light_jv ? light
                                    : sets[s].kind == DataKind::dark_jv ? dark
                                    : sets[s].kind == DataKind::eqe     ? eqe
                                                                        : voc;
                  per_set[s].assign(flat.begin() + at, flat.begin() + at + sets[s].x.size());
                  at += sets[s].x.size();
                }
            }
          for (const auto &v : per_set)
            out[i].insert(out[i].end(), v.begin(), v.end());
        }
      solves += unsigned(n_tasks);
      return out;
    }

    std::vector<std::vector<double>>
    Calibration::predict(const std::vector<std::vector<double>> &us)
    {
      std::vector<std::vector<double>> todo;
      for (const auto &u : us)
        if (!cache.count(u) && std::find(todo.begin(), todo.end(), u) == todo.end())
          todo.push_back(u);
      if (!todo.empty())
        {
          int command = 1;
          MPI_Bcast(&command, 1, MPI_INT, 0, comm);
          todo = dealii::Utilities::MPI::broadcast(comm, todo, 0);
          const auto values = solve_batch(todo);
          for (std::size_t i = 0; i < todo.size(); ++i)
            {
              cache[todo[i]] = values[i];
              const std::string line = json{{"u", todo[i]}, {"model", values[i]}}.dump(
                                         -1, ' ', false, json::error_handler_t::replace) +
                                       "\n";
              if (std::fputs(line.c_str(), cache_file.get()) < 0 || std::fflush(cache_file.get()) != 0)
                throw OutputError(o.folder + "/evaluations.jsonl: cannot append an evaluation");
              fsync(fileno(cache_file.get()));
            }
        }
      else
        replayed += unsigned(us.size());
      std::vector<std::vector<double>> out;
      for (const auto &u : us)
        out.push_back(cache.at(u));
      return out;
    }

    void
    Calibration::serve()
    {
      for (;;)
        {
          int command = 0;
          MPI_Bcast(&command, 1, MPI_INT, 0, comm);
          if (command == 0)
            return;
          std::vector<std::vector<double>> todo;
          todo = dealii::Utilities::MPI::broadcast(comm, todo, 0);
          solve_batch(todo);
        }
    }

    // (model - data) / sigma * sqrt(weight), point by point.
    std::vector<double>
    Calibration::residuals(const std::vector<double> &model) const
    {
      std::vector<double> r;
      std::size_t         i = 0;
      for (std::size_t k = 0; k < sets.size(); ++k)
        for (std::size_t j = 0; j < sets[k].x.size(); ++j, ++i)
          r.push_back(std::isfinite(model[i]) ? std::sqrt(sets[k].weight) * (model[i] - sets[k].y[j]) / sigma[k]
                                              : missing_residual);
      return r;
    }

    // The robust loss as a transformed residual: rho(r) = r~^2 / 2 with
    // r~ = sign(r) sqrt(2 rho(r)) (the square-root form of an M-estimator,
    // B. Triggs et al., "Bundle adjustment - a modern synthesis", 2000,
    // sec. 4.3 - from memory); `slope` = dr~/dr.
    double
    Calibration::robust(const double r, double &slope) const
    {
      const double c = o.loss_scale, a = std::abs(r);
      double       rho = 0.5 * r * r, drho = r;
      if (o.loss == RobustLoss::huber && a > c)
        rho = c * (a - 0.5 * c), drho = c * (r > 0 ? 1 : -1);
      else if (o.loss == RobustLoss::cauchy)
        rho = 0.5 * c * c * std::log1p(r * r / (c * c)), drho = r / (1 + r * r / (c * c));
      const double t = (r >= 0 ? 1 : -1) * std::sqrt(2 * rho);
      slope          = a > 1e-12 ? drho / t : 1.0;
      return t;
    }

    std::vector<double>
    Calibration::robust_residuals(const std::vector<double> &raw) const
    {
      std::vector<double> t(raw.size());
      double              slope;
      for (std::size_t i = 0; i < raw.size(); ++i)
        t[i] = robust(raw[i], slope);
      return t;
    }

    std::vector<double>
    Calibration::jacobian(const std::vector<double> &u)
    {
      const std::size_t                p = entries.size();
      std::vector<std::vector<double>> us{u};
      std::vector<double>              step(p);
      for (std::size_t k = 0; k < p; ++k)
        {
          std::vector<double> v = u;
          step[k]               = u[k] + fd_step <= 1.0 ? fd_step : -fd_step;
          v[k] += step[k];
          us.push_back(v);
        }
      const auto               model = predict(us);
      const std::vector<double> r0   = residuals(model[0]);
      const std::size_t         m    = r0.size();
      std::vector<double>       J(m * p);
      for (std::size_t k = 0; k < p; ++k)
        {
          const std::vector<double> rk = residuals(model[k + 1]);
          for (std::size_t i = 0; i < m; ++i)
            J[i * p + k] = (rk[i] - r0[i]) / step[k];
        }
      return J;
    }

    std::vector<double>
    to_std(Vec x)
    {
      PetscInt n;
      VecGetSize(x, &n);
      const PetscScalar *a;
      VecGetArrayRead(x, &a);
      std::vector<double> u(a, a + n);
      VecRestoreArrayRead(x, &a);
      for (double &v : u)
        v = std::clamp(v, 0.0, 1.0);
      return u;
    }

    PetscErrorCode
    Calibration::tao_residual(Tao, Vec x, Vec f, void *ctx)
    {
      auto *self = static_cast<TaoContext *>(ctx)->self;
      try
        {
          const auto t = self->robust_residuals(self->residuals(self->predict({to_std(x)})[0]));
          PetscScalar *a;
          VecGetArray(f, &a);
          std::copy(t.begin(), t.end(), a);
          VecRestoreArray(f, &a);
          return 0;
        }
      catch (...)
        {
          self->error = std::current_exception();
          return PETSC_ERR_USER;
        }
    }

    PetscErrorCode
    Calibration::tao_jacobian(Tao, Vec x, Mat J, Mat, void *ctx)
    {
      auto *self = static_cast<TaoContext *>(ctx)->self;
      try
        {
          const auto                u   = to_std(x);
          const std::vector<double> raw = self->residuals(self->predict({u})[0]);
          const std::vector<double> jr  = self->jacobian(u);
          const std::size_t         p = u.size(), m = raw.size();
          for (std::size_t i = 0; i < m; ++i)
            {
              double slope;
              self->robust(raw[i], slope);
              for (std::size_t k = 0; k < p; ++k)
                MatSetValue(J, PetscInt(i), PetscInt(k), slope * jr[i * p + k], INSERT_VALUES);
            }
          MatAssemblyBegin(J, MAT_FINAL_ASSEMBLY);
          MatAssemblyEnd(J, MAT_FINAL_ASSEMBLY);
          return 0;
        }
      catch (...)
        {
          self->error = std::current_exception();
          return PETSC_ERR_USER;
        }
    }

    PetscErrorCode
    Calibration::tao_monitor(Tao tao, void *ctx)
    {
      auto              *self = static_cast<TaoContext *>(ctx)->self;
      PetscInt           its;
      PetscReal          f, gnorm, cnorm, xdiff;
      TaoConvergedReason reason;
      TaoGetSolutionStatus(tao, &its, &f, &gnorm, &cnorm, &xdiff, &reason);
      Vec x;
      TaoGetSolution(tao, &x);
      const auto u = to_std(x);
      double     cost = 0;
      try
        {
          for (const double t : self->robust_residuals(self->residuals(self->predict({u})[0])))
            cost += 0.5 * t * t;
        }
      catch (...)
        {
          self->error = std::current_exception();
          return PETSC_ERR_USER;
        }
      json values = json::object();
      double step = 0;
      for (std::size_t k = 0; k < u.size() && k < self->monitor_u.size(); ++k)
        step = std::max(step, std::abs(u[k] - self->monitor_u[k]));
      self->monitor_u  = u;
      // TAOBRGN calls this monitor from its inner solver's iterations; the
      // step test stops the inner solver (and with it the outer one).
      if (its > 0 && step < step_tolerance)
        {
          TaoSetConvergedReason(tao, TAO_CONVERGED_STEPTOL);
          if (self->inner)
            TaoSetConvergedReason(self->inner, TAO_CONVERGED_STEPTOL);
        }
      std::string line = "iteration " + std::to_string(its) + ": cost " + format_number(cost, 6) +
                         ", step " + format_number(step, 3) + " (largest change of a scaled entry), gradient " +
                         format_number(gnorm, 3) + ", solves " + std::to_string(self->solves);
      for (std::size_t k = 0; k < u.size(); ++k)
        {
          const double v = self->entries[k].from_unit(u[k]);
          values[self->entries[k].path] = v;
          line += "\n    " + self->entries[k].path + " = " + format_number(v, 6);
        }
      self->history.push_back(
        {{"iteration", its}, {"cost", cost}, {"step", step}, {"gradient", gnorm}, {"solves", self->solves}, {"values", values}});
      if (!self->o.quiet)
        {
          const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - self->start).count();
          std::printf("[%7.1f s] %s\n", s, line.c_str());
          std::fflush(stdout);
        }
      return 0;
    }

    const char *
    reason_text(const int reason)
    {
      switch (reason)
        {
          case TAO_CONVERGED_GATOL:
            return "converged: gradient below the absolute tolerance";
          case TAO_CONVERGED_GRTOL:
            return "converged: gradient below the relative tolerance";
          case TAO_CONVERGED_GTTOL:
            return "converged: gradient reduced by the requested factor";
          case TAO_CONVERGED_STEPTOL:
            return "converged: the parameters moved less than 1e-7 of their (log) range in one iteration";
          case TAO_CONVERGED_MINF:
            return "converged: cost below the floor";
          case TAO_CONVERGED_USER:
            return "converged";
          case TAO_DIVERGED_MAXITS:
            return "stopped: maximum number of iterations (--iterations)";
          case TAO_DIVERGED_LS_FAILURE:
            return "stopped: the line search found no decrease";
          case TAO_DIVERGED_TR_REDUCTION:
            return "stopped: the trust region collapsed";
          case TAO_DIVERGED_MAXFCN:
            return "stopped: maximum number of evaluations";
          default:
            return reason > 0 ? "converged" : "stopped without convergence";
        }
    }

    int
    Calibration::run()
    {
      read_inputs();
      if (!root)
        {
          serve();
          return exit_ok;
        }
      int code = exit_ok;
      try
        {
          make_folder(o.folder);
          std::error_code ec;
          std::filesystem::remove(o.folder + "/fit.json", ec); // marks a finished fit
          open_cache();
          if (!o.quiet)
            std::printf("calibrate: %zu data sets (%zu points) on %zu devices, %zu fitted entries, %u rank(s)\n",
                        sets.size(), n_points, devices.size(), entries.size(),
                        dealii::Utilities::MPI::n_mpi_processes(comm));

          const PetscInt p = PetscInt(entries.size()), m = PetscInt(n_points);
          Tao            tao;
          Vec            x, lo, hi, f;
          Mat            J;
          TaoCreate(PETSC_COMM_SELF, &tao);
          TaoSetType(tao, TAOBRGN);
          VecCreateSeq(PETSC_COMM_SELF, p, &x);
          VecDuplicate(x, &lo);
          VecDuplicate(x, &hi);
          VecSet(lo, 0.0);
          VecSet(hi, 1.0);
          for (PetscInt k = 0; k < p; ++k)
            VecSetValue(x, k, entries[k].to_unit(entries[k].start), INSERT_VALUES);
          VecAssemblyBegin(x);
          VecAssemblyEnd(x);
          VecCreateSeq(PETSC_COMM_SELF, m, &f);
          MatCreateSeqDense(PETSC_COMM_SELF, m, p, nullptr, &J);
          TaoSetSolution(tao, x);
          TaoSetVariableBounds(tao, lo, hi);
          TaoContext pr{this}, pj{this}, pm{this};
          TaoSetResidualRoutine(tao, f, tao_residual, &pr);
          TaoSetJacobianResidualRoutine(tao, J, J, tao_jacobian, &pj);
          TaoSetOptionsPrefix(tao, "backcomb_fit_");
          PetscOptionsSetValue(nullptr, "-backcomb_fit_tao_brgn_regularization_type", "l2prox");
          // The inner solver: bounded Newton with a trust region (on the
          // Gauss-Newton Hessian), which rejects a step that raises the cost
          // and shrinks the region; ill-conditioned fits (correlated
          // entries) otherwise take giant first steps to the bounds.
          PetscOptionsSetValue(nullptr, "-tao_brgn_subsolver_tao_type", "bntr");
          // The first trust region: a tenth of every scaled range.
          PetscOptionsSetValue(nullptr, "-tao_brgn_subsolver_tao_bnk_init_type", "constant");
          PetscOptionsSetValue(nullptr, "-tao_brgn_subsolver_tao_trust0", "0.1");
          TaoSetFromOptions(tao);
          TaoSetTolerances(tao, 1e-10, 1e-12, 0.0);
          TaoSetMaximumIterations(tao, PetscInt(o.max_iterations));
          TaoSetMonitor(tao, tao_monitor, &pm, nullptr);
          // TAOBRGN iterates with an inner bounded Newton solver (stopped
          // by the step test in tao_monitor).
          TaoBRGNGetSubsolver(tao, &inner);
          PetscPushErrorHandler(PetscReturnErrorHandler, nullptr);
          const PetscErrorCode ierr = TaoSolve(tao);
          PetscPopErrorHandler();
          if (error)
            std::rethrow_exception(error);
          if (ierr)
            throw std::runtime_error("the optimiser (PETSc TAO) stopped with error code " + std::to_string(ierr));
          TaoConvergedReason reason;
          TaoGetConvergedReason(tao, &reason);
          PetscInt its;
          TaoGetIterationNumber(tao, &its);
          const std::vector<double> u = to_std(x);
          TaoDestroy(&tao);
          VecDestroy(&x), VecDestroy(&lo), VecDestroy(&hi), VecDestroy(&f);
          MatDestroy(&J);
          finish(u, int(reason), unsigned(its));
          code = reason > 0 ? exit_ok : exit_no_convergence;
        }
      catch (...)
        {
          int command = 0;
          MPI_Bcast(&command, 1, MPI_INT, 0, comm);
          throw;
        }
      int command = 0;
      MPI_Bcast(&command, 1, MPI_INT, 0, comm);
      return code;
    }

    // Uncertainty from the Jacobian at the optimum and every output file.
    void
    Calibration::finish(const std::vector<double> &u, const int reason, const unsigned iterations)
    {
      const std::size_t         p     = entries.size();
      const std::vector<double> model = predict({u})[0];
      const std::vector<double> r     = residuals(model);
      const std::vector<double> start_u = [&] {
        std::vector<double> s;
        for (const auto &e : entries)
          s.push_back(e.to_unit(e.start));
        return s;
      }();
      const std::vector<double> start_model = predict({start_u})[0];
      const std::vector<double> Jr          = jacobian(u);
      const std::size_t         m           = r.size();
      double                    chi2 = 0, chi2_start = 0;
      for (const double v : r)
        chi2 += v * v;
      for (const double v : residuals(start_model))
        chi2_start += v * v;
      const double s2 = sigma_given ? 1.0 : chi2 / double(m - p);

      // Column-scaled SVD of J: scaled singular values near zero are
      // directions the data do not determine.
      std::vector<double> norm(p, 0.0);
      for (std::size_t k = 0; k < p; ++k)
        {
          for (std::size_t i = 0; i < m; ++i)
            norm[k] += Jr[i * p + k] * Jr[i * p + k];
          norm[k] = std::sqrt(norm[k]);
        }
      const double largest_norm = *std::max_element(norm.begin(), norm.end());
      std::vector<bool> identifiable(p, true);
      std::vector<std::string> warnings;
      // An entry whose column is below 1e-6 of the largest one moves the
      // data less than the finite differences' noise (solves converged to
      // the Newton tolerance from different first guesses): the data do
      // not depend on it.
      for (std::size_t k = 0; k < p; ++k)
        if (!(norm[k] > 1e-6 * largest_norm) || !(norm[k] > 0))
          {
            identifiable[k] = false;
            warnings.push_back(entries[k].path + ": not identifiable: the data do not depend on it");
          }
      std::vector<std::size_t> active;
      for (std::size_t k = 0; k < p; ++k)
        if (identifiable[k])
          active.push_back(k);
      const std::size_t              q = active.size();
      std::vector<std::vector<double>> cov(p, std::vector<double>(p, std::nan("")));
      if (q > 0)
        {
          dealii::LAPACKFullMatrix<double> A(m, q);
          for (std::size_t i = 0; i < m; ++i)
            for (std::size_t a = 0; a < q; ++a)
              A(i, a) = Jr[i * p + active[a]] / norm[active[a]];
          A.compute_svd();
          const auto &vt = A.get_svd_vt();
          const double smax = A.singular_value(0);
          // Pseudo-inverse of the scaled normal matrix; weak directions
          // (scaled condition number above 1e6) are left out and the
          // entries that make them up reported.
          constexpr double weak = 1e-6;
          std::vector<std::vector<double>> c(q, std::vector<double>(q, 0.0));
          for (std::size_t j = 0; j < q; ++j)
            {
              const double sj = A.singular_value(j);
              if (sj < weak * smax)
                {
                  std::string who;
                  for (std::size_t a = 0; a < q; ++a)
                    if (std::abs(vt(j, a)) > 0.3)
                      {
                        identifiable[active[a]] = false;
                        who += (who.empty() ? "" : ", ") + entries[active[a]].path;
                      }
                  warnings.push_back("not identifiable together: " + who +
                                     " (the data fix only a combination of them; near-singular normal matrix, "
                                     "scaled condition number " +
                                     format_number(smax / std::max(sj, 1e-300), 3) + ")");
                  continue;
                }
              for (std::size_t a = 0; a < q; ++a)
                for (std::size_t b = 0; b < q; ++b)
                  c[a][b] += vt(j, a) * vt(j, b) / (sj * sj);
            }
          for (std::size_t a = 0; a < q; ++a)
            for (std::size_t b = 0; b < q; ++b)
              if (identifiable[active[a]] && identifiable[active[b]])
                cov[active[a]][active[b]] = s2 * c[a][b] / (norm[active[a]] * norm[active[b]]);
        }

      json fitted = json::array();
      std::vector<double> values(p);
      for (std::size_t k = 0; k < p; ++k)
        {
          const FittedEntry &e = entries[k];
          values[k]            = e.from_unit(u[k]);
          const bool at_bound  = u[k] < 1e-3 || u[k] > 1 - 1e-3;
          if (at_bound)
            warnings.push_back(e.path + ": at its " + (u[k] < 0.5 ? "lower" : "upper") + " bound " +
                               format_number(u[k] < 0.5 ? e.low : e.high) +
                               "; the best value may lie beyond it and its standard error means little");
          const double su = std::sqrt(cov[k][k]);
          // d value / du
          const double dvdu = e.log ? values[k] * std::log(10.0) * (std::log10(e.high) - std::log10(e.low))
                                    : (e.high - e.low);
          json j = {{"entry", e.path},
                    {"start", e.start},
                    {"value", values[k]},
                    {"lower_bound", e.low},
                    {"upper_bound", e.high},
                    {"scaling", e.log ? "log" : "linear"},
                    {"at_bound", at_bound},
                    {"sensitivity", norm[k]},
                    {"identifiable", bool(identifiable[k])}};
          if (identifiable[k] && std::isfinite(su))
            {
              j["standard_error"]          = su * dvdu;
              j["relative_standard_error"] = su * dvdu / std::abs(values[k]);
              if (e.log)
                j["one_sigma_factor"] = std::pow(10.0, su * (std::log10(e.high) - std::log10(e.low)));
            }
          else
            j["standard_error"] = nullptr;
          fitted.push_back(j);
        }
      json corr = json::array();
      for (std::size_t a = 0; a < p; ++a)
        {
          json row = json::array();
          for (std::size_t b = 0; b < p; ++b)
            {
              const double c = cov[a][b] / std::sqrt(cov[a][a] * cov[b][b]);
              row.push_back(std::isfinite(c) ? json(c) : json(nullptr));
              if (b > a && std::isfinite(c) && std::abs(c) > 0.95)
                warnings.push_back("strongly correlated (" + format_number(c, 3) + "): " + entries[a].path +
                                   " and " + entries[b].path + "; the data fix mainly a combination of the two");
            }
          corr.push_back(row);
        }

      // Per data set: residuals, table and plot.
      json        data = json::array();
      std::string csv  = "# measured data and the model at the fitted values; residual = (model - measured) / "
                        "sigma * sqrt(weight)\nset,x,measured,model_fitted,model_start,residual\n";
      std::vector<std::string> plot_warnings;
      std::size_t              i0 = 0;
      for (std::size_t k = 0; k < sets.size(); ++k)
        {
          const MeasuredSet &s = sets[k];
          double             ss = 0, ss0 = 0;
          const auto         rs = residuals(start_model);
          postprocess::FitPlotData plot;
          plot.title   = s.label + " (" + kind_name(s.kind) + ")";
          plot.x_label = s.kind == DataKind::eqe            ? "wavelength (nm)"
                         : s.kind == DataKind::voc_vs_light ? "light intensity (suns)"
                                                            : "bias V (V)";
          plot.y_label = s.kind == DataKind::eqe            ? "EQE"
                         : s.kind == DataKind::voc_vs_light ? "V#doc#u (V)"
                                                            : "J (mA/cm#u2#d), generated > 0";
          plot.residual_label = s.kind == DataKind::eqe            ? "model - data"
                                : s.kind == DataKind::voc_vs_light ? "model - data (V)"
                                                                   : "model - data (mA/cm#u2#d)";
          plot.log_y = s.kind == DataKind::dark_jv;
          if (plot.log_y)
            plot.y_label = "|J| (mA/cm#u2#d)";
          for (std::size_t j = 0; j < s.x.size(); ++j)
            {
              const std::size_t i = i0 + j;
              ss += r[i] * r[i];
              ss0 += rs[i] * rs[i];
              plot.x.push_back(s.x[j]);
              plot.measured.push_back(s.y[j]);
              plot.fitted.push_back(model[i]);
              plot.start.push_back(start_model[i]);
              csv += "\"" + s.label + "\"," + exact(s.x[j]) + "," + exact(s.y[j]) + "," + exact(model[i]) + "," +
                     exact(start_model[i]) + "," + exact(r[i]) + "\n";
            }
          std::string stem = "fit-" + std::to_string(k + 1);
          const auto  files = postprocess::write_fit_plots(plot, o.folder + "/" + stem, plot_warnings);
          json        plots = json::array();
          for (const auto &f : files)
            plots.push_back(std::filesystem::path(f).filename().string());
          data.push_back({{"file", s.file},
                          {"label", s.label},
                          {"kind", kind_name(s.kind)},
                          {"device", s.device},
                          {"points", s.x.size()},
                          {"weight", s.weight},
                          {"sigma", sigma[k]},
                          {"sigma_declared", s.sigma.has_value()},
                          {"units", {s.x_unit, s.y_unit}},
                          {"rms_residual_start", std::sqrt(ss0 / double(s.x.size()))},
                          {"rms_residual", std::sqrt(ss / double(s.x.size()))},
                          {"plots", plots}});
          i0 += s.x.size();
        }
      for (const auto &w : plot_warnings)
        warnings.push_back(w);
      const auto unsolved = std::count_if(model.begin(), model.end(), [](double v) { return !std::isfinite(v); });
      if (unsolved > 0)
        warnings.push_back("the model has no converged value at " + std::to_string(unsolved) +
                           " data point(s) at the fitted values (counted as " + format_number(missing_residual) +
                           " standard deviations off); see NaN in fit-points.csv");

      // The fitted case: the base case as written, then the --set values
      // and the fitted values, and data files by absolute path.
      std::string prm = case_text;
      if (!prm.empty() && prm.back() != '\n')
        prm += "\n";
      prm += "\n# ---- calibrated by backcomb calibrate (fit.json beside this file) ----\n";
      std::vector<std::string> lines = common;
      for (std::size_t k = 0; k < p; ++k)
        lines.push_back(entries[k].path + "=" + format_number(values[k], 6));
      const simulator::Case base = simulator::read_case(o.case_file, o.sets);
      const auto           folder = std::filesystem::absolute(o.case_file).parent_path();
      for (const char *entry : {"Illumination/Spectrum file", "Illumination/Optical constants file",
                                "Illumination/Depth table file"})
        {
          const std::string v = simulator::entry_value(base, entry);
          bool              set = false;
          for (const auto &l : lines)
            set = set || simulator::split_override(l).first == entry;
          if (!v.empty() && std::filesystem::path(v).is_relative() && !set)
            lines.push_back(std::string(entry) + "=" + (folder / v).lexically_normal().string());
        }
      for (const auto &l : lines)
        prm += simulator::override_as_text(l);
      write_file_atomically(o.folder + "/fitted.prm", prm);
      write_file_atomically(o.folder + "/fit-points.csv", csv);

      const json result = {
        {"backcomb_version", program_version()},
        {"case_file", o.case_file},
        {"sets", o.sets},
        {"optimiser", "PETSc TAO, bounded regularised Gauss-Newton (TAOBRGN), proximal (l2prox) regularisation"},
        {"status", reason > 0 ? "converged" : "not converged"},
        {"reason", reason_text(reason)},
        {"iterations", iterations},
        {"solves", solves},
        {"evaluations_replayed", replayed},
        {"loss", {{"kind", o.loss == RobustLoss::none ? "none" : o.loss == RobustLoss::huber ? "huber" : "cauchy"},
                  {"scale_sigma", o.loss_scale}}},
        {"cost_start", 0.5 * chi2_start},
        {"cost", 0.5 * chi2},
        {"degrees_of_freedom", m - p},
        {"covariance_basis",
         sigma_given ? "declared noise (sigma of every data set): covariance (J^T J)^-1"
                     : "scaled by the residual variance s^2 = sum r^2 / (points - entries) = " + format_number(s2, 4)},
        {"entries", fitted},
        {"correlation", corr},
        {"data", data},
        {"warnings", warnings},
        {"history", history},
        {"fitted_case", "fitted.prm"},
        {"points_table", "fit-points.csv"}};
      write_json_atomically(o.folder + "/fit.json", result);

      if (!o.quiet)
        {
          std::printf("calibrate: %s after %u iterations, %u solves; cost %s -> %s\n", reason_text(reason),
                      iterations, solves, format_number(0.5 * chi2_start, 4).c_str(),
                      format_number(0.5 * chi2, 4).c_str());
          for (const auto &j : fitted)
            std::printf("  %-45s %-12s %s\n", j["entry"].get<std::string>().c_str(),
                        format_number(j["value"].get<double>(), 5).c_str(),
                        j["standard_error"].is_null()
                          ? "(not identifiable)"
                          : ("+- " + format_number(j["standard_error"].get<double>(), 2)).c_str());
          std::printf("  results: %s/fit.json, fitted case %s/fitted.prm\n", o.folder.c_str(), o.folder.c_str());
        }
      for (const auto &w : warnings)
        std::fprintf(stderr, "backcomb: warning: %s\n", w.c_str());
    }
  } // namespace

  int
  run_calibration(const CalibrationOptions &o, MPI_Comm comm)
  {
    Calibration c(o, comm);
    const int code = c.run();
    // Scratch meshes of every rank.
    std::error_code ec;
    std::filesystem::remove_all(o.folder + "/scratch-rank" +
                                  std::to_string(dealii::Utilities::MPI::this_mpi_process(comm)),
                                ec);
    return code;
  }
} // namespace backcomb::study
