#include "simulator/checkpoint.h"

#include "base/files.h"

#include <deal.II/base/mpi.h>

#include <algorithm>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iomanip>
#include <sstream>

namespace backcomb::simulator
{
  namespace fs = std::filesystem;

  namespace
  {
    // Bumped whenever the point layout or the meaning of a state changes.
    constexpr unsigned format_version = 1;
    const std::string  point_magic    = "backcomb checkpoint point 1\n";

    // 64-bit FNV-1a (G. Fowler, L. C. Noll, K.-P. Vo): a fast hash that is
    // plenty to tell changed inputs and damaged files apart; it is not a
    // defence against deliberate tampering.
    std::uint64_t
    fnv1a(const char *data, std::size_t size, std::uint64_t h = 14695981039346656037ull)
    {
      for (std::size_t i = 0; i < size; ++i)
        {
          h ^= static_cast<unsigned char>(data[i]);
          h *= 1099511628211ull;
        }
      return h;
    }

    std::string
    hex(std::uint64_t h)
    {
      std::ostringstream s;
      s << std::hex << std::setw(16) << std::setfill('0') << h;
      return s.str();
    }

    std::string
    read_file(const std::string &path, bool &ok)
    {
      std::ifstream f(path, std::ios::binary);
      std::ostringstream s;
      s << f.rdbuf();
      ok = bool(f);
      return s.str();
    }

    template <typename T>
    void
    put(std::string &out, const T &v)
    {
      out.append(reinterpret_cast<const char *>(&v), sizeof v);
    }

    template <typename T>
    bool
    get(const std::string &in, std::size_t &pos, T &v)
    {
      if (pos + sizeof v > in.size())
        return false;
      std::memcpy(&v, in.data() + pos, sizeof v);
      pos += sizeof v;
      return true;
    }

    // The number NNNN of "point-NNNN.bin", or 0 for any other name
    // (temporary files "point-NNNN.bin.tmp.<host>.<pid>" included).
    unsigned
    point_number(const std::string &name)
    {
      unsigned n = 0;
      char     tail[8] = "";
      if (std::sscanf(name.c_str(), "point-%u%7s", &n, tail) == 2 && std::string(tail) == ".bin")
        return n;
      return 0;
    }
  } // namespace

  std::string
  checkpoint_fingerprint(const std::string &case_text, const std::vector<std::string> &overrides,
                         const std::string &mesh_file, unsigned unknowns, unsigned processes)
  {
    std::uint64_t o = fnv1a("", 0);
    for (const auto &s : overrides)
      o = fnv1a(s.c_str(), s.size() + 1, o); // with the terminating 0 as separator
    bool              ok   = false;
    const std::string mesh = read_file(mesh_file, ok);
    std::ostringstream f;
    f << "backcomb checkpoint format " << format_version << '\n'
      << "case text " << hex(fnv1a(case_text.data(), case_text.size())) << '\n'
      << "overrides " << hex(o) << '\n'
      << "mesh " << (ok ? hex(fnv1a(mesh.data(), mesh.size())) : "unreadable") << '\n'
      << "unknowns " << unknowns << '\n'
      // The DoF numbering of a shared triangulation depends on the number
      // of processes, so a state is only valid for the same count.
      << "processes " << processes << '\n';
    return f.str();
  }

  std::string
  encode_point(const StoredPoint &p)
  {
    std::string out = point_magic;
    put(out, std::uint32_t(p.sweep.size()));
    out += p.sweep;
    put(out, p.voltage);
    put(out, p.current);
    put(out, std::uint32_t(p.newton));
    put(out, std::uint32_t(p.halvings));
    put(out, std::uint64_t(p.state.size()));
    for (const double v : p.state)
      put(out, v);
    put(out, fnv1a(out.data(), out.size()));
    return out;
  }

  bool
  decode_point(const std::string &in, StoredPoint &p)
  {
    if (in.size() < point_magic.size() + sizeof(std::uint64_t) ||
        in.compare(0, point_magic.size(), point_magic) != 0)
      return false;
    const std::size_t body = in.size() - sizeof(std::uint64_t);
    std::uint64_t     sum  = 0;
    std::memcpy(&sum, in.data() + body, sizeof sum);
    if (sum != fnv1a(in.data(), body))
      return false;
    std::size_t   pos = point_magic.size();
    std::uint32_t length = 0, newton = 0, halvings = 0;
    std::uint64_t n = 0;
    if (!get(in, pos, length) || pos + length > body)
      return false;
    p.sweep = in.substr(pos, length);
    pos += length;
    if (!get(in, pos, p.voltage) || !get(in, pos, p.current) || !get(in, pos, newton) ||
        !get(in, pos, halvings) || !get(in, pos, n) || pos + n * sizeof(double) != body)
      return false;
    p.newton   = newton;
    p.halvings = halvings;
    p.state.reinit(n);
    for (std::uint64_t i = 0; i < n; ++i)
      get(in, pos, p.state[i]);
    return true;
  }

  Checkpoint::Checkpoint(const std::string &results_folder, const std::string &fingerprint, MPI_Comm comm)
    : dir(results_folder + "/checkpoint")
    , fingerprint(fingerprint)
    , comm(comm)
    , root(dealii::Utilities::MPI::this_mpi_process(comm) == 0)
  {}

  std::vector<StoredPoint>
  Checkpoint::load(const bool quiet)
  {
    // Rank 0 decides whether the checkpoint is ours, and clears a foreign
    // one, before any process reads a point.
    int usable = 0;
    if (root && fs::is_directory(dir))
      {
        bool              ok     = false;
        const std::string stored = read_file(dir + "/fingerprint", ok);
        if (ok && stored == fingerprint)
          usable = 1;
        else
          {
            std::error_code ec;
            bool            had_points = false;
            for (const auto &e : fs::directory_iterator(dir, ec))
              had_points |= point_number(e.path().filename().string()) > 0;
            if (had_points)
              std::fprintf(stderr, "backcomb: the checkpoint in %s belongs to another case, mesh or "
                                   "process count; starting afresh\n", dir.c_str());
            fs::remove_all(dir, ec);
          }
      }
    MPI_Bcast(&usable, 1, MPI_INT, 0, comm);
    std::vector<StoredPoint> points;
    if (usable)
      {
        fingerprint_written = true;
        std::vector<std::pair<unsigned, std::string>> files;
        std::error_code                               ec;
        for (const auto &e : fs::directory_iterator(dir, ec))
          if (const unsigned n = point_number(e.path().filename().string()))
            files.emplace_back(n, e.path().string());
        std::sort(files.begin(), files.end());
        for (const auto &[n, path] : files)
          {
            bool        ok = false;
            StoredPoint p;
            if (decode_point(read_file(path, ok), p) && ok)
              points.push_back(std::move(p));
            else if (root)
              std::fprintf(stderr, "backcomb: ignoring the damaged checkpoint file %s\n", path.c_str());
            next = std::max(next, n + 1);
          }
      }
    // No process may go on (and rank 0 write new points) before all have read.
    MPI_Barrier(comm);
    if (root && !quiet && !points.empty())
      std::printf("resumed from %zu points of %s\n", points.size(), dir.c_str());
    return points;
  }

  void
  Checkpoint::save(const StoredPoint &p)
  {
    const std::lock_guard<std::mutex> hold(saving);
    std::string                       error;
    if (root)
      try
        {
          if (!fingerprint_written)
            {
              make_folder(dir);
              write_file_atomically(dir + "/fingerprint", fingerprint);
            }
          char name[32];
          std::snprintf(name, sizeof name, "/point-%04u.bin", next);
          write_file_atomically(dir + name, encode_point(p));
        }
      catch (const std::exception &e)
        {
          error = e.what();
        }
    if (dealii::Utilities::MPI::n_mpi_processes(comm) > 1)
      error = dealii::Utilities::MPI::broadcast(comm, error, 0);
    if (!error.empty())
      throw OutputError(error);
    fingerprint_written = true;
    ++next;
  }

  void
  Checkpoint::remove() const
  {
    if (!root)
      return;
    std::error_code ec;
    fs::remove_all(dir, ec);
  }
} // namespace backcomb::simulator
