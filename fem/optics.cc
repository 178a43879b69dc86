#include "fem/optics.h"

#include "fem/physics/generation_model.h"
#include "fem/physics/registry.h"

#include "fem/constants.h"
#include "base/entries.h"
#include "base/format.h"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <sstream>
#include <stdexcept>

#ifndef BACKCOMB_DATA_DIR
#  error "BACKCOMB_DATA_DIR must name the folder with the shipped data files"
#endif

namespace backcomb::fem
{
  namespace
  {
    // ------------------------------------------------ text-file helpers

    // One row of a numeric table with where it came from, so that every
    // later check can name the line and show its text.
    struct Row
    {
      std::vector<double> values;
      int                 line = 0;
      std::string         text;
    };

    [[noreturn]] void
    fail(const std::string &file,
         const int          line,
         const std::string &text,
         const std::string &reason)
    {
      throw InputError(file + ":" + std::to_string(line), trim(text), reason);
    }

    std::vector<std::string>
    read_lines(std::istream &in)
    {
      std::vector<std::string> lines;
      for (std::string line; std::getline(in, line);)
        lines.push_back(line);
      return lines;
    }

    // Opens a data file; the readers then take the stream, so that tests and
    // fuzz targets can feed them text without a file.
    std::ifstream
    open_data_file(const std::filesystem::path &path, const std::string &what)
    {
      std::ifstream in(path);
      if (!in)
        throw InputError("cannot open the " + what + " file '" +
                         path.string() + "'");
      return in;
    }

    std::vector<std::string>
    split_commas(const std::string &text)
    {
      std::vector<std::string> fields;
      std::stringstream        in(text);
      for (std::string field; std::getline(in, field, ',');)
        fields.push_back(trim(field));
      // getline drops a trailing empty field ("1,2,"); keep it so that the
      // row counts as having a missing column.
      if (!text.empty() && trim(text).back() == ',')
        fields.emplace_back();
      return fields;
    }

    std::vector<std::string>
    split_blanks(const std::string &text)
    {
      std::vector<std::string> fields;
      std::istringstream       in(text);
      for (std::string field; in >> field;)
        fields.push_back(field);
      return fields;
    }

    // True if the whole field is one number (strtod also accepts "nan" and
    // "inf"; those are rejected later as not finite, with a clearer reason).
    bool
    parse_number(const std::string &field, double &value)
    {
      if (field.empty())
        return false;
      char *end = nullptr;
      value     = std::strtod(field.c_str(), &end);
      return end == field.c_str() + field.size();
    }

    // Converts the fields of one data line into a Row, checking the number
    // of columns and that every field is a finite number.
    Row
    parse_row(const std::string              &file,
              const int                       line,
              const std::string              &text,
              const std::vector<std::string> &fields,
              const std::size_t               columns,
              const std::string              &layout)
    {
      const bool empty_field =
        std::any_of(fields.begin(), fields.end(), [](const std::string &f) {
          return f.empty();
        });
      if (fields.size() < columns || empty_field)
        fail(file,
             line,
             text,
             "missing column (truncated row?): expected " + layout);
      if (fields.size() > columns)
        fail(file, line, text, "too many columns: expected " + layout);
      Row row{{}, line, text};
      for (const auto &field : fields)
        {
          double v = 0;
          if (!parse_number(field, v))
            fail(file, line, text, "'" + field + "' is not a number");
          if (!std::isfinite(v))
            fail(file, line, text, "'" + field + "' is not a finite number");
          row.values.push_back(v);
        }
      return row;
    }

    bool
    is_comment_or_blank(const std::string &line)
    {
      const std::string t = trim(line);
      return t.empty() || t.front() == '#';
    }

    // Reads the two-column CSV layout of our own tables: '#' comments and
    // blank lines anywhere, then the header line, then data rows.
    std::vector<Row>
    read_two_column_csv(std::istream      &in,
                        const std::string &file,
                        const std::string &header)
    {
      const auto        lines = read_lines(in);
      std::vector<Row>  rows;
      bool              header_seen = false;
      for (std::size_t i = 0; i < lines.size(); ++i)
        {
          const int line = static_cast<int>(i) + 1;
          if (is_comment_or_blank(lines[i]))
            continue;
          if (!header_seen)
            {
              std::string compact;
              for (const char ch : lines[i])
                if (!std::isspace(static_cast<unsigned char>(ch)))
                  compact += ch;
              if (compact != header)
                fail(file,
                     line,
                     lines[i],
                     "the first line that is not a comment must be the "
                     "header '" +
                       header + "'");
              header_seen = true;
              continue;
            }
          rows.push_back(
            parse_row(file, line, lines[i], split_commas(lines[i]), 2, header));
        }
      if (!header_seen)
        throw InputError(file, "", "empty file: expected the header '" + header + "'");
      return rows;
    }

    void
    require_rows(const std::string      &file,
                 const std::vector<Row> &rows,
                 const std::size_t       minimum)
    {
      if (rows.size() < minimum)
        throw InputError(file,
                         std::to_string(rows.size()) + " data rows",
                         "at least " + std::to_string(minimum) +
                           " data rows are needed");
    }

    // Column 0 must increase strictly from row to row.
    void
    require_increasing(const std::string      &file,
                       const std::vector<Row> &rows,
                       const std::string      &quantity)
    {
      for (std::size_t i = 1; i < rows.size(); ++i)
        if (!(rows[i].values[0] > rows[i - 1].values[0]))
          {
            std::ostringstream r;
            r << quantity << " " << rows[i].values[0]
              << " is not greater than the previous row's "
              << rows[i - 1].values[0]
              << " (rows must be sorted by strictly increasing " << quantity
              << ")";
            fail(file, rows[i].line, rows[i].text, r.str());
          }
    }

    void
    require_sign(const std::string &file,
                 const Row         &row,
                 const std::size_t  column,
                 const std::string &quantity,
                 const bool         strictly_positive)
    {
      const double v  = row.values[column];
      const bool   ok = strictly_positive ? v > 0 : v >= 0;
      if (!ok)
        fail(file,
             row.line,
             row.text,
             quantity + (strictly_positive ? " must be > 0" : " must be >= 0"));
    }

    // The refractiveindex.info YAML layout: find "DATA:", the entry
    // "- type: tabulated nk" and its block "data: |"; the block ends at the
    // first non-blank line indented no deeper than the "data:" key.
    std::vector<Row>
    read_nk_yaml(std::istream &in, const std::string &file)
    {
      const auto        lines = read_lines(in);
      const std::string layout = "wavelength_um n k";

      std::size_t i = 0;
      while (i < lines.size() && trim(lines[i]).rfind("DATA:", 0) != 0)
        ++i;
      if (i == lines.size())
        throw InputError(file, "", "no 'DATA:' block found");

      // The first entry of the list must be tabulated nk: other entry
      // types (formulas, separate n and k tables) are not supported.
      for (++i; i < lines.size() && is_comment_or_blank(lines[i]); ++i)
        ;
      const std::string type_prefix = "- type:";
      if (i == lines.size() || trim(lines[i]).rfind(type_prefix, 0) != 0)
        throw InputError(file, "", "'DATA:' has no '- type:' entry");
      const std::string type = trim(trim(lines[i]).substr(type_prefix.size()));
      if (type != "tabulated nk")
        fail(file,
             static_cast<int>(i) + 1,
             lines[i],
             "only 'type: tabulated nk' data are supported");

      for (++i; i < lines.size() && trim(lines[i]).rfind("data:", 0) != 0; ++i)
        ;
      if (i == lines.size())
        throw InputError(file, "", "the 'tabulated nk' entry has no 'data: |' block");
      const std::size_t key_indent = lines[i].find_first_not_of(' ');

      std::vector<Row> rows;
      for (++i; i < lines.size(); ++i)
        {
          if (trim(lines[i]).empty())
            continue;
          if (lines[i].find_first_not_of(" \t") <= key_indent)
            break;
          rows.push_back(parse_row(file,
                                   static_cast<int>(i) + 1,
                                   lines[i],
                                   split_blanks(lines[i]),
                                   3,
                                   layout));
        }
      return rows;
    }

  } // namespace

  double
  interpolate(const std::vector<double> &x,
              const std::vector<double> &y,
              const double               at)
  {
    if (x.size() == 1)
      return y[0];
    const auto   upper = std::upper_bound(x.begin(), x.end(), at);
    const auto   i     = std::clamp<std::ptrdiff_t>(upper - x.begin(),
                                              1,
                                              static_cast<std::ptrdiff_t>(
                                                x.size()) - 1);
    const double s     = (at - x[i - 1]) / (x[i] - x[i - 1]);
    return y[i - 1] + s * (y[i] - y[i - 1]);
  }

  std::string
  format_range(const double lo, const double hi, const std::string &unit)
  {
    std::ostringstream s;
    s << lo << "-" << hi << " " << unit;
    return s.str();
  }

  std::filesystem::path
  case_file_path(const dealii::ParameterHandler &prm,
                 const std::string              &name,
                 const std::filesystem::path    &base_folder,
                 const std::filesystem::path    &fallback)
  {
    const std::string text = trim(prm.get(name));
    if (text.empty())
      return fallback;
    std::filesystem::path p(text);
    if (p.is_relative() && !base_folder.empty())
      p = base_folder / p;
    return p.lexically_normal();
  }

  // ------------------------------------------------------------- readers

  Spectrum
  read_spectrum(const std::filesystem::path &path)
  {
    auto in = open_data_file(path, "spectrum");
    return read_spectrum(in, path.string());
  }

  Spectrum
  read_spectrum(std::istream &in, const std::string &file_name)
  {
    Spectrum spectrum;
    spectrum.file     = file_name;
    const auto &file  = spectrum.file;
    const auto  lines = read_lines(in);

    std::vector<Row> rows;
    std::size_t      columns = 0;
    for (std::size_t i = 0; i < lines.size(); ++i)
      {
        if (is_comment_or_blank(lines[i]))
          continue;
        const auto fields = split_commas(lines[i]);
        double     first  = 0;
        // Header lines (titles, column names) precede the first data row.
        if (columns == 0 && !parse_number(fields[0], first))
          continue;
        if (columns == 0)
          columns = fields.size() >= 3 ? fields.size() : 2;
        rows.push_back(parse_row(file,
                                 static_cast<int>(i) + 1,
                                 lines[i],
                                 fields,
                                 columns,
                                 columns == 2 ?
                                   "wavelength_nm,irradiance" :
                                   std::to_string(columns) +
                                     " columns as in the first data row"));
      }
    require_rows(file, rows, 2);
    require_increasing(file, rows, "wavelength");

    // Two columns: wavelength, irradiance. The ASTM G173 layout: wavelength,
    // extraterrestrial, global tilt (AM1.5G), direct.
    const std::size_t column = columns == 2 ? 1 : 2;
    for (const auto &row : rows)
      {
        require_sign(file, row, 0, "wavelength", true);
        require_sign(file, row, column, "irradiance", false);
        spectrum.wavelength_nm.push_back(row.values[0]);
        spectrum.irradiance.push_back(row.values[column]);
      }
    return spectrum;
  }

  OpticalConstants
  read_optical_constants(const std::filesystem::path &path)
  {
    auto in = open_data_file(path, "optical constants");
    return read_optical_constants(in, path.string());
  }

  OpticalConstants
  read_optical_constants(std::istream &in, const std::string &file_name)
  {
    OpticalConstants constants;
    constants.file    = file_name;
    const auto &file  = constants.file;
    std::string ext   = std::filesystem::path(file_name).extension().string();
    std::transform(ext.begin(), ext.end(), ext.begin(), [](unsigned char c) {
      return std::tolower(c);
    });

    if (ext == ".yml" || ext == ".yaml")
      {
        const auto rows = read_nk_yaml(in, file);
        require_rows(file, rows, 2);
        require_increasing(file, rows, "wavelength");
        constants.kind = OpticalConstants::Kind::nk;
        for (const auto &row : rows)
          {
            require_sign(file, row, 0, "wavelength", true);
            require_sign(file, row, 1, "n", true);
            require_sign(file, row, 2, "k", false);
            constants.wavelength_nm.push_back(1000. * row.values[0]);
            constants.n.push_back(row.values[1]);
            constants.k.push_back(row.values[2]);
          }
      }
    else
      {
        const auto rows =
          read_two_column_csv(in, file, "wavelength_nm,alpha_per_cm");
        require_rows(file, rows, 2);
        require_increasing(file, rows, "wavelength");
        constants.kind = OpticalConstants::Kind::alpha;
        for (const auto &row : rows)
          {
            require_sign(file, row, 0, "wavelength", true);
            require_sign(file, row, 1, "alpha", false);
            constants.wavelength_nm.push_back(row.values[0]);
            constants.alpha_per_cm.push_back(row.values[1]);
          }
      }
    return constants;
  }

  void
  check_wavelength_coverage(const OpticalConstants &constants,
                            const double            lo_nm,
                            const double            hi_nm)
  {
    const auto &w = constants.wavelength_nm;
    if (w.empty() || lo_nm < w.front() || hi_nm > w.back())
      throw InputError(constants.file,
                       w.empty() ? "no data" :
                                   format_range(w.front(), w.back(), "nm"),
                       "the optical constants cover too little: " +
                         format_range(lo_nm, hi_nm, "nm") +
                         " is needed (the spectrum above the band gap)");
  }

  double
  absorption_coefficient(const OpticalConstants &constants,
                         const double            wavelength_nm)
  {
    check_wavelength_coverage(constants, wavelength_nm, wavelength_nm);
    if (constants.kind == OpticalConstants::Kind::alpha)
      return interpolate(constants.wavelength_nm,
                         constants.alpha_per_cm,
                         wavelength_nm);
    const double k =
      interpolate(constants.wavelength_nm, constants.k, wavelength_nm);
    // alpha = 4 pi k / lambda, with lambda converted from nm to cm.
    constexpr double pi = 3.14159265358979323846;
    return 4 * pi * k / (wavelength_nm * 1e-7);
  }

  DepthTable
  read_depth_table(const std::filesystem::path &path)
  {
    DepthTable table;
    table.file       = path.string();
    auto        in   = open_data_file(path, "depth table");
    const auto  rows = read_two_column_csv(in,
                                          table.file,
                                          "depth_nm,generation_per_cm3_s");
    require_rows(table.file, rows, 2);
    require_increasing(table.file, rows, "depth");
    for (const auto &row : rows)
      {
        require_sign(table.file, row, 0, "depth", false);
        require_sign(table.file, row, 1, "generation rate", false);
        table.depth_nm.push_back(row.values[0]);
        table.generation_per_cm3_s.push_back(row.values[1]);
      }
    return table;
  }

  // ------------------------------------------------------------- physics

  double
  photon_energy_eV(const double wavelength_nm)
  {
    using namespace constants;
    return h * c / (q * wavelength_nm * 1e-9);
  }

  std::vector<double>
  photon_flux(const Spectrum &spectrum)
  {
    using namespace constants;
    std::vector<double> flux(spectrum.wavelength_nm.size());
    for (std::size_t i = 0; i < flux.size(); ++i)
      {
        // E [W m^-2 nm^-1] / (h c / lambda) [J] = m^-2 s^-1 nm^-1; 1e-4 to cm^-2.
        const double photon_energy = h * c / (spectrum.wavelength_nm[i] * 1e-9);
        flux[i] = 1e-4 * spectrum.irradiance[i] / photon_energy;
      }
    return flux;
  }

  double
  integrate_trapezoid(const std::vector<double> &x, const std::vector<double> &y)
  {
    double sum = 0;
    for (std::size_t i = 1; i < x.size(); ++i)
      sum += 0.5 * (y[i] + y[i - 1]) * (x[i] - x[i - 1]);
    return sum;
  }

  AboveGapSpectrum
  above_gap_spectrum(const Spectrum &spectrum, const double band_gap_eV)
  {
    if (!(band_gap_eV > 0))
      throw std::invalid_argument("the band gap must be > 0 eV");
    // The grid increases in wavelength, so the above-gap points are a prefix.
    const auto         flux = photon_flux(spectrum);
    AboveGapSpectrum   above;
    for (std::size_t i = 0; i < flux.size(); ++i)
      {
        if (photon_energy_eV(spectrum.wavelength_nm[i]) < band_gap_eV)
          break;
        above.wavelength_nm.push_back(spectrum.wavelength_nm[i]);
        above.photon_flux.push_back(flux[i]);
      }
    return above;
  }

  AboveGapSpectrum
  above_gap_spectrum(const Spectrum         &spectrum,
                     const OpticalConstants &constants,
                     const double            band_gap_eV)
  {
    AboveGapSpectrum above = above_gap_spectrum(spectrum, band_gap_eV);
    const auto      &w     = above.wavelength_nm;
    if (w.empty())
      return above;

    // Reference spectra start in the ultraviolet where they carry almost no
    // photons (AM1.5G below 300 nm: about 1e-6 of the photon current above
    // 1.6 eV), while measured optical constants often start at 300 nm.
    // Such a tail may stay uncovered; everything above it must be covered.
    const double total = integrate_trapezoid(w, above.photon_flux);
    std::size_t  first_needed = 0;
    double       tail         = 0;
    for (std::size_t i = 1; i < w.size(); ++i)
      {
        tail += 0.5 * (above.photon_flux[i] + above.photon_flux[i - 1]) *
                (w[i] - w[i - 1]);
        if (tail > uncovered_tail_fraction * total)
          break;
        first_needed = i;
      }
    check_wavelength_coverage(constants, w[first_needed], w.back());

    above.alpha_per_cm.resize(w.size(), 0.);
    for (std::size_t i = 0; i < w.size(); ++i)
      if (w[i] >= constants.wavelength_nm.front())
        above.alpha_per_cm[i] = absorption_coefficient(constants, w[i]);
    return above;
  }

  double
  photon_current_mA_per_cm2(const AboveGapSpectrum &above_gap)
  {
    // q [C] times photons cm^-2 s^-1 gives A/cm^2; 1e3 for mA.
    return 1e3 * constants::q *
           integrate_trapezoid(above_gap.wavelength_nm, above_gap.photon_flux);
  }

  double
  beer_lambert_generation(const AboveGapSpectrum &above_gap,
                          const BeerLambert      &optics,
                          const double            depth_um)
  {
    const auto         &w = above_gap.wavelength_nm;
    std::vector<double> integrand(w.size());
    // Depths in cm so that alpha d is dimensionless.
    const double d = 1e-4 * depth_um;
    const double t = 1e-4 * optics.thickness_um;
    for (std::size_t i = 0; i < w.size(); ++i)
      {
        const double alpha = above_gap.alpha_per_cm[i];
        integrand[i] = above_gap.photon_flux[i] * alpha *
                       (std::exp(-alpha * d) +
                        optics.back_reflectance * std::exp(-alpha * (2 * t - d)));
      }
    return optics.intensity_suns * (1 - optics.front_reflectance) * optics.transmitted *
           integrate_trapezoid(w, integrand);
  }

  namespace
  {
    // q int Phi(lambda) A(lambda) w(lambda) dlambda in mA/cm^2 (w = 1) or
    // mW/cm^2 (w = photon energy in eV), with the absorptance A of the
    // passes: per wavelength, int_0^t alpha e^{-alpha d} dd = 1 - e^{-alpha
    // t} and the reflected pass adds R_b e^{-alpha t} (1 - e^{-alpha t}).
    double
    absorbed_integral(const AboveGapSpectrum &above_gap,
                      const BeerLambert      &optics,
                      const bool              weight_by_energy)
    {
      const auto         &w = above_gap.wavelength_nm;
      const double        t = 1e-4 * optics.thickness_um;
      std::vector<double> integrand(w.size());
      for (std::size_t i = 0; i < w.size(); ++i)
        {
          const double transmitted = std::exp(-above_gap.alpha_per_cm[i] * t);
          integrand[i] = (weight_by_energy ? photon_energy_eV(w[i]) : 1.0) *
                         above_gap.photon_flux[i] * (1 - transmitted) *
                         (1 + optics.back_reflectance * transmitted);
        }
      return 1e3 * constants::q * optics.intensity_suns * (1 - optics.front_reflectance) * optics.transmitted *
             integrate_trapezoid(w, integrand);
    }
  } // namespace

  double
  beer_lambert_absorbed_current(const AboveGapSpectrum &above_gap,
                                const BeerLambert      &optics)
  {
    return absorbed_integral(above_gap, optics, false);
  }

  double
  beer_lambert_absorbed_power(const AboveGapSpectrum &above_gap,
                              const BeerLambert      &optics)
  {
    return absorbed_integral(above_gap, optics, true);
  }

  // ------------------------------------------------------ optical budget

  OpticalBudget &
  OpticalBudget::operator*=(const double s)
  {
    for (double *v : {&incident, &reflected, &shaded, &parasitic, &absorbed, &below_gap, &passed_through,
                      &absorbed_current})
      *v *= s;
    return *this;
  }

  OpticalBudget &
  OpticalBudget::operator+=(const OpticalBudget &b)
  {
    incident += b.incident;
    reflected += b.reflected;
    shaded += b.shaded;
    parasitic += b.parasitic;
    absorbed += b.absorbed;
    below_gap += b.below_gap;
    passed_through += b.passed_through;
    absorbed_current += b.absorbed_current;
    return *this;
  }

  double
  OpticalColumn::entering() const
  {
    if (!from_substrate || !finger)
      return 1;
    return finger_transmittance * (1 - interlayer_absorptance);
  }

  // Film side over a finger: of the light reaching the absorber's far side,
  // A is absorbed crossing the interlayer; of the (1 - A) reaching the
  // finger, R_b comes back across the interlayer (losing A again), T_f of
  // the rest passes through and the finger takes the remainder.
  double
  OpticalColumn::returned(const double back_reflectance) const
  {
    const double A = (from_substrate || !finger) ? 0 : interlayer_absorptance;
    return back_reflectance * (1 - A) * (1 - A);
  }

  double
  OpticalColumn::parasitic_behind(const double back_reflectance) const
  {
    if (from_substrate || !finger)
      return 0;
    const double A = interlayer_absorptance;
    return A + back_reflectance * (1 - A) * A;
  }

  double
  OpticalColumn::shaded_behind(const double back_reflectance) const
  {
    if (from_substrate || !finger)
      return 0;
    return (1 - interlayer_absorptance) * (1 - back_reflectance) * (1 - finger_transmittance);
  }

  double
  OpticalColumn::leaving_behind(const double back_reflectance) const
  {
    if (from_substrate || !finger)
      return 1 - back_reflectance;
    return (1 - interlayer_absorptance) * (1 - back_reflectance) * finger_transmittance;
  }

  OpticalColumn::Fractions
  OpticalColumn::fractions(const double R_f, const double R_b, const double e) const
  {
    const bool   behind_finger = from_substrate && finger; // the light crosses finger and interlayer first
    const double T_f           = behind_finger ? finger_transmittance : 1;
    const double A_front       = behind_finger ? interlayer_absorptance : 0;
    const double into          = (1 - R_f) * entering();
    const double R             = returned(R_b);
    Fractions    f;
    f.reflected   = R_f;
    f.shaded      = (1 - R_f) * (1 - T_f) + into * e * shaded_behind(R_b);
    f.parasitic   = (1 - R_f) * T_f * A_front + into * e * parasitic_behind(R_b);
    // Absorbed on the way in and, of what comes back, on the way out.
    f.absorbed    = into * (1 - e) * (1 + R * e);
    f.transmitted = into * e * leaving_behind(R_b);
    f.escaped     = into * e * R * e;
    return f;
  }

  OpticalBudget
  column_budget(const Spectrum         &spectrum,
                const AboveGapSpectrum &above_gap,
                const OpticalColumn    &column,
                const double            intensity_suns,
                const double            front_reflectance,
                const double            back_reflectance)
  {
    // Every term wavelength by wavelength on the spectrum's own grid, with
    // the above-gap prefix (alpha from the optical constants) and the rest
    // (alpha = 0) integrated apart; they share the prefix's last node, so
    // the two parts add up to the trapezoidal rule over the whole grid and
    // the absorbed part is exactly the one of the generation profile.
    const auto       &w    = spectrum.wavelength_nm;
    const std::size_t m    = above_gap.wavelength_nm.size();
    const double      t_cm = 1e-4 * column.absorber_um;

    OpticalBudget                    b;
    const std::array<std::size_t, 2> first{0, m == 0 ? 0 : m - 1}, last{m == 0 ? 0 : m - 1, w.size() - 1};
    for (const int part : {0, 1})
      {
        const bool above = part == 0;
        if (above && m < 2)
          continue; // no above-gap interval
        const std::size_t   n     = last[part] - first[part] + 1;
        std::vector<double> x(n), inc(n), refl(n), abs(n), abs_photons(n), par(n), shade(n), out(n);
        for (std::size_t k = 0; k < n; ++k)
          {
            const std::size_t i = first[part] + k;
            x[k]                = w[i];
            // W m^-2 nm^-1 to mW cm^-2 nm^-1: 0.1.
            const double P      = 0.1 * intensity_suns * spectrum.irradiance[i];
            const double alpha  = above ? above_gap.alpha_per_cm[k] : 0;
            const auto   f      = column.fractions(front_reflectance, back_reflectance, std::exp(-alpha * t_cm));
            inc[k]              = P;
            refl[k]             = P * f.reflected;
            abs[k]              = P * f.absorbed;
            abs_photons[k]      = above ? P * f.absorbed / photon_energy_eV(w[i]) : 0;
            par[k]              = P * f.parasitic;
            shade[k]            = P * f.shaded;
            out[k]              = P * (f.transmitted + f.escaped);
          }
        if (n < 2)
          continue;
        b.incident += integrate_trapezoid(x, inc);
        b.reflected += integrate_trapezoid(x, refl);
        b.shaded += integrate_trapezoid(x, shade);
        b.parasitic += integrate_trapezoid(x, par);
        b.absorbed += integrate_trapezoid(x, abs);
        (above ? b.passed_through : b.below_gap) += integrate_trapezoid(x, out);
        // mW/cm^2 over eV is mA/cm^2 of photons.
        b.absorbed_current += integrate_trapezoid(x, abs_photons);
      }
    return b;
  }

  // ----------------------------------------------------------- case file

  IlluminationParameters::IlluminationParameters()
    : spectrum_file(std::filesystem::path(BACKCOMB_DATA_DIR) /
                    "astm-g173-03.csv")
    , optical_constants_file(std::filesystem::path(BACKCOMB_DATA_DIR) /
                             "absorber-nk-mapi.yml")
  {}

  namespace
  {
    const std::string illumination_section = "Illumination";

    // The numeric entries of section "Illumination", each described once.
    const NumberEntry intensity{
      "Intensity", 1, "suns", Range::at_least(0),
      "Illumination intensity (1 sun = the spectrum as given, about "
      "100 mW/cm^2; 0 = dark)"};
    const NumberEntry finger_transmittance_entry{
      "Finger transmittance", 0.85, "", Range::closed(0, 1),
      "Fraction of the light transmitted through the fingers: when lit through the substrate, of the light "
      "reaching them from the glass (the rest is shaded); when lit from the film side, of the light reaching "
      "them through the film that they do not reflect (Back reflectance; the rest they absorb)"};
    const NumberEntry electron_interlayer_alpha{
      "Electron interlayer absorption coefficient", 0, "cm^-1", Range::at_least(0),
      "Absorption coefficient of the electron interlayer (Geometry/Electron interlayer thickness), the same "
      "at every wavelength; the light it absorbs makes no pairs that are solved and is booked as parasitic "
      "absorption"};
    const NumberEntry hole_interlayer_alpha{
      "Hole interlayer absorption coefficient", 0, "cm^-1", Range::at_least(0),
      "Absorption coefficient of the hole interlayer, as for the electron interlayer"};
  } // namespace

  void
  IlluminationParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    using dealii::Patterns::Selection;
    const auto                  &models = generation_models();
    const IlluminationParameters defaults;
    const std::string           &s      = illumination_section;
    std::string                  doc    = "How the generation rate in the absorber is obtained.";
    for (const std::string &name : models.names())
      doc += " " + models.create(name)->description();
    doc += " All are scaled by 'Intensity'.";
    prm.enter_subsection(s);
    declare_text(prm, s, "Generation model", defaults.model, Selection(models.selection()), "", doc);
    declare(prm, s, intensity);
    declare_text(prm, s, "Illuminated side", "film", Selection("film|substrate"), "",
                 "Where the light enters: 'film' = through the free top surface of the absorber; "
                 "'substrate' = through the substrate and the electrode fingers.");
    declare(prm, s, finger_transmittance_entry);
    declare(prm, s, electron_interlayer_alpha);
    declare(prm, s, hole_interlayer_alpha);
    // Every model's own entries (files, rates, reflectances).
    for (const std::string &name : models.names())
      models.create(name)->declare_parameters(prm, defaults);
    prm.leave_subsection();
  }

  void
  IlluminationParameters::parse_parameters(
    dealii::ParameterHandler    &prm,
    const std::filesystem::path &base_folder)
  {
    const std::string &section = illumination_section;
    const auto        &models  = generation_models();
    prm.enter_subsection(section);
    model = prm.get("Generation model");
    // Every model's entries are read and checked, also those of the models
    // not chosen; the chosen one may require more.
    for (const std::string &name : models.names())
      models.create(name)->parse_parameters(prm, base_folder, name == model, *this);
    intensity_suns = get(prm, section, intensity);
    side = prm.get("Illuminated side") == "substrate" ? Side::substrate : Side::film;
    finger_transmittance = get(prm, section, finger_transmittance_entry);
    electron_interlayer_alpha_per_cm = get(prm, section, electron_interlayer_alpha);
    hole_interlayer_alpha_per_cm     = get(prm, section, hole_interlayer_alpha);
    prm.leave_subsection();
  }

  // ---------------------------------------------------------- Generation

  Generation::Generation(const IlluminationParameters &parameters,
                         const double                  band_gap_eV,
                         const double                  thickness_um,
                         const FingerLayout           &layout)
    : thickness_um_(thickness_um)
    , from_substrate_(parameters.side ==
                      IlluminationParameters::Side::substrate)
    , finger_transmittance_(parameters.finger_transmittance)
    , layout_(layout)
  {
    if (!(thickness_um > 0))
      throw std::invalid_argument("Generation: absorber thickness must be > 0");
    if (layout.electron_finger_half_width_um < 0 || layout.gap_um < 0 ||
        layout.hole_finger_half_width_um < 0 || layout.electron_interlayer_um < 0 ||
        layout.hole_interlayer_um < 0)
      throw std::invalid_argument("Generation: negative finger layout size");
    if (layout.electron_interlayer_um >= thickness_um || layout.hole_interlayer_um >= thickness_um)
      throw std::invalid_argument("Generation: an interlayer fills the whole film");

    // Columns: gap, electron finger, hole finger (the verification strip
    // has the gap column only).
    const auto model = generation_models().create(parameters.model, "Illumination/Generation model");
    const std::array<double, 3> interlayer_um{0, layout.has_fingers ? layout.electron_interlayer_um : 0,
                                              layout.has_fingers ? layout.hole_interlayer_um : 0};
    const std::array<double, 3> alpha_per_cm{0, parameters.electron_interlayer_alpha_per_cm,
                                             parameters.hole_interlayer_alpha_per_cm};
    for (std::size_t c = 0; c < columns_.size(); ++c)
      {
        Column &col             = columns_[c];
        col.interlayer_um       = interlayer_um[c];
        col.optics.absorber_um  = thickness_um - interlayer_um[c];
        col.optics.from_substrate = from_substrate_;
        col.optics.finger       = c > 0 && layout.has_fingers;
        col.optics.finger_transmittance = col.optics.finger ? finger_transmittance_ : 1;
        // Beer-Lambert across the interlayer (um to cm: 1e-4).
        col.optics.interlayer_absorptance = 1 - std::exp(-alpha_per_cm[c] * 1e-4 * interlayer_um[c]);
        // A column whose light path matches an earlier one's shares its
        // profile (film side without interlayers: all three).
        const auto same_light_path = [&](const OpticalColumn &a) {
          return a.absorber_um == col.optics.absorber_um && a.entering() == col.optics.entering() &&
                 a.returned(parameters.back_reflectance) == col.optics.returned(parameters.back_reflectance);
        };
        bool shared = false;
        for (std::size_t e = 0; e < c && !shared; ++e)
          if (same_light_path(columns_[e].optics))
            {
              col.profile = columns_[e].profile;
              shared      = true;
            }
        if (!shared)
          col.profile = model->profile(parameters, band_gap_eV, col.optics);
        col.budget = model->budget(parameters, band_gap_eV, col.optics);
      }
    absorbed_current_ = columns_[0].profile.absorbed_current;
    photon_current_   = columns_[0].profile.photon_current;
    if (auto s = model->spectral(parameters, band_gap_eV))
      spectral_ = std::move(*s);
    intensity_suns_    = parameters.intensity_suns;
    front_reflectance_ = parameters.front_reflectance;
    back_reflectance_  = parameters.back_reflectance;
  }

  std::array<double, 3>
  Generation::column_widths() const
  {
    if (!layout_.has_fingers)
      return {1, 0, 0};
    return {layout_.gap_um, layout_.electron_finger_half_width_um, layout_.hole_finger_half_width_um};
  }

  std::vector<double>
  Generation::incident_photon_flux() const
  {
    std::vector<double> flux = spectral_.photon_flux;
    for (double &f : flux)
      f *= intensity_suns_;
    return flux;
  }

  void
  Generation::add_pair_densities(const double x_um, const double y_um, const double weight,
                                 std::vector<double> &acc) const
  {
    const Column &col   = column_at(x_um);
    const double  t     = col.optics.absorber_um;
    const double  depth = std::clamp(from_substrate_ ? y_um - col.interlayer_um : thickness_um_ - y_um, 0., t);
    const double  into  = (1 - front_reflectance_) * col.optics.entering();
    const double  R     = col.optics.returned(back_reflectance_);
    for (std::size_t i = 0; i < spectral_.wavelength_nm.size(); ++i)
      {
        const double alpha = 1e-4 * spectral_.alpha_per_cm[i]; // um^-1
        acc[i] += weight * into * alpha * (std::exp(-alpha * depth) + R * std::exp(-alpha * (2 * t - depth)));
      }
  }

  Generation::SpectralFractions
  Generation::spectral_fractions() const
  {
    const std::size_t     n = spectral_.wavelength_nm.size();
    SpectralFractions     f{std::vector<double>(n, 0.), std::vector<double>(n, 0.), std::vector<double>(n, 0.)};
    const auto            width  = column_widths();
    const double          period = width[0] + width[1] + width[2];
    for (std::size_t c = 0; c < columns_.size(); ++c)
      {
        if (!(width[c] > 0))
          continue;
        const OpticalColumn &o     = columns_[c].optics;
        const double         share = width[c] / period;
        for (std::size_t i = 0; i < n; ++i)
          {
            const auto p = o.fractions(front_reflectance_, back_reflectance_,
                                       std::exp(-spectral_.alpha_per_cm[i] * 1e-4 * o.absorber_um));
            f.absorbed[i] += share * p.absorbed;
            f.reflected[i] += share * (p.reflected + p.escaped);
            f.transmitted[i] += share * p.transmitted;
          }
      }
    return f;
  }

  double
  Generation::rate_at_depth(const double depth_um) const
  {
    return interpolate(columns_[0].profile.depth_um, columns_[0].profile.rate_per_cm3_s,
                       std::clamp(depth_um, 0., thickness_um_));
  }

  const Generation::Column &
  Generation::column_at(const double x_um) const
  {
    if (!layout_.has_fingers)
      return columns_[0];
    const double gap_start = layout_.electron_finger_half_width_um;
    const double gap_end   = gap_start + layout_.gap_um;
    return x_um < gap_start ? columns_[1] : x_um > gap_end ? columns_[2] : columns_[0];
  }

  double
  Generation::rate(const double x_um, const double y_um) const
  {
    // Film side: light enters at the top surface y = t; substrate side: at
    // the absorber's bottom, which over a finger is the interlayer's top.
    const Column &col   = column_at(x_um);
    const double  depth = from_substrate_ ? y_um - col.interlayer_um : thickness_um_ - y_um;
    return interpolate(col.profile.depth_um, col.profile.rate_per_cm3_s,
                       std::clamp(depth, 0., col.optics.absorber_um));
  }

  std::optional<OpticalBudget>
  Generation::optical_budget() const
  {
    if (!columns_[0].budget)
      return std::nullopt;
    if (!layout_.has_fingers)
      return columns_[0].budget;
    // The period average: electron finger half, gap, hole finger half.
    const std::array<double, 3> width = column_widths();
    const double                period = width[0] + width[1] + width[2];
    OpticalBudget               b;
    for (std::size_t c = 0; c < columns_.size(); ++c)
      {
        OpticalBudget part = *columns_[c].budget;
        part *= width[c] / period;
        b += part;
      }
    return b;
  }

  double
  Generation::period_average_transmittance() const
  {
    if (!from_substrate_ || !layout_.has_fingers)
      return 1;
    const double fingers = layout_.electron_finger_half_width_um +
                           layout_.hole_finger_half_width_um;
    const double period  = fingers + layout_.gap_um;
    if (!(period > 0))
      return 1;
    return (finger_transmittance_ * fingers + layout_.gap_um) / period;
  }
} // namespace backcomb::fem
