// Optical generation in the absorber: spectrum and optical-constant readers,
// Beer-Lambert generation profiles, and the case-file section "Illumination".
//
// Units at this interface: wavelengths in nm, depths and coordinates in µm,
// absorption coefficients in cm^-1, photon fluxes in cm^-2 s^-1 nm^-1,
// generation rates in cm^-3 s^-1, current densities in mA/cm^2, band gaps
// in eV, intensity in suns (1 sun = the reference spectrum as given).
#pragma once

#include <deal.II/base/parameter_handler.h>

#include <array>
#include <filesystem>
#include <istream>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::fem
{
  // ----------------------------------------------------------------- data

  // A solar spectrum on its own (non-uniform) wavelength grid.
  struct Spectrum
  {
    std::string         file;          // for messages
    std::vector<double> wavelength_nm; // strictly increasing
    std::vector<double> irradiance;    // W m^-2 nm^-1
  };

  // Reads a comma-separated spectrum. Leading lines whose first field is not
  // a number are headers. Data rows have either two columns (wavelength_nm,
  // irradiance) or the layout of the ASTM G173-03 tables (wavelength_nm,
  // extraterrestrial, global tilt, direct), of which the global-tilt
  // (AM1.5G) column is used. Throws InputError naming file, line and text.
  Spectrum
  read_spectrum(const std::filesystem::path &path);
  // The same from a stream; `file` names it in messages.
  Spectrum
  read_spectrum(std::istream &in, const std::string &file);

  // Absorption data of the absorber, either as complex refractive index
  // (n, k) or directly as absorption coefficient.
  struct OpticalConstants
  {
    enum class Kind
    {
      nk,   // n and k filled
      alpha // alpha_per_cm filled
    };
    std::string         file; // for messages
    Kind                kind = Kind::nk;
    std::vector<double> wavelength_nm; // strictly increasing
    std::vector<double> n;
    std::vector<double> k;
    std::vector<double> alpha_per_cm;
  };

  // Two formats, chosen by the file extension:
  //  - ".yml"/".yaml": the tabulated-nk YAML layout of the refractiveindex.info
  //    database: a "DATA:" list whose entry "- type: tabulated nk" carries a
  //    block "data: |" of rows "wavelength_um n k".
  //  - anything else: an absorption-coefficient table. Lines starting with '#'
  //    and blank lines are ignored; the first other line must be the header
  //    "wavelength_nm,alpha_per_cm"; then one row "wavelength_nm,alpha_per_cm"
  //    per line (comma separated, alpha in cm^-1).
  // Throws InputError naming file, line and the offending text.
  OpticalConstants
  read_optical_constants(const std::filesystem::path &path);
  // The same from a stream; the extension of `file` selects the format and
  // `file` names the stream in messages.
  OpticalConstants
  read_optical_constants(std::istream &in, const std::string &file);

  // Throws InputError (naming the file, the needed and the available range)
  // unless the table covers [lo_nm, hi_nm].
  void
  check_wavelength_coverage(const OpticalConstants &constants,
                            double                  lo_nm,
                            double                  hi_nm);

  // Absorption coefficient in cm^-1 at a wavelength inside the table: k is
  // interpolated linearly and converted with alpha = 4 pi k / lambda, or
  // alpha is interpolated linearly. No band-gap cut-off is applied here.
  double
  absorption_coefficient(const OpticalConstants &constants,
                         double                  wavelength_nm);

  // -------------------------------------------------------------- physics

  // Photon energy in eV of a wavelength in nm: E = h c / (q lambda).
  double
  photon_energy_eV(double wavelength_nm);

  // Spectral photon flux Phi = E lambda / (h c) on the spectrum's grid, in
  // cm^-2 s^-1 nm^-1.
  std::vector<double>
  photon_flux(const Spectrum &spectrum);

  // Trapezoidal rule for tabulated y(x).
  double
  integrate_trapezoid(const std::vector<double> &x,
                      const std::vector<double> &y);

  // The part of the spectrum grid whose photon energy is at least the band
  // gap (a prefix of the grid: the grid is not refined at the gap), with the
  // 1-sun photon flux and the absorption coefficient on it.
  struct AboveGapSpectrum
  {
    std::vector<double> wavelength_nm;
    std::vector<double> photon_flux;  // cm^-2 s^-1 nm^-1 at 1 sun
    std::vector<double> alpha_per_cm; // empty if built without constants
  };

  // Photon flux only (no optical constants needed).
  AboveGapSpectrum
  above_gap_spectrum(const Spectrum &spectrum, double band_gap_eV);

  // Photon flux and absorption coefficient. The optical constants must cover
  // the above-gap grid; only a short-wavelength tail carrying at most
  // `uncovered_tail_fraction` of the above-gap photon current may lie below
  // the table, and is then counted as not absorbed.
  AboveGapSpectrum
  above_gap_spectrum(const Spectrum         &spectrum,
                     const OpticalConstants &constants,
                     double                  band_gap_eV);

  constexpr double uncovered_tail_fraction = 1e-4;

  // q times the photon flux above the gap, in mA/cm^2 at 1 sun: the upper
  // bound of the absorbed photon current.
  double
  photon_current_mA_per_cm2(const AboveGapSpectrum &above_gap);

  // Geometry and optics of a Beer-Lambert pass through the absorber.
  struct BeerLambert
  {
    double thickness_um      = 1;
    double intensity_suns    = 1;
    double front_reflectance = 0; // lost before entering the absorber
    double back_reflectance  = 0; // 0 = single pass, 1 = perfect mirror
    // Of the light past the front reflectance, the fraction that reaches
    // the absorber (fingers and an interlayer on the way take the rest).
    double transmitted       = 1;
  };

  // G(d) in cm^-3 s^-1 at depth d (µm) below the illuminated surface:
  // S (1 - R_f) T int Phi alpha [exp(-alpha d) + R_b exp(-alpha (2 t - d))].
  double
  beer_lambert_generation(const AboveGapSpectrum &above_gap,
                          const BeerLambert      &optics,
                          double                  depth_um);

  // q int_0^t G(d) dd in mA/cm^2, integrated over depth in closed form
  // for each wavelength.
  double
  beer_lambert_absorbed_current(const AboveGapSpectrum &above_gap,
                                const BeerLambert      &optics);

  // Absorbed power in mW/cm^2 (photon energy times absorbed photon flux,
  // same passes as beer_lambert_absorbed_current).
  double
  beer_lambert_absorbed_power(const AboveGapSpectrum &above_gap,
                              const BeerLambert      &optics);

  // Where the incident power goes before it becomes electron-hole pairs,
  // averaged over the period footprint, in mW/cm^2. Each term is computed
  // on its own (wavelength by wavelength, same quadrature), so that their
  // sum closing on `incident` is a check, not a definition.
  struct OpticalBudget
  {
    double incident  = 0; // the whole spectrum times the intensity
    double reflected = 0; // front reflectance
    double shaded    = 0; // taken by the fingers (see OpticalColumn)
    double parasitic = 0; // absorbed in the interlayers (no pairs solved there)
    double absorbed  = 0; // in the absorber, photon energy included
    double below_gap = 0; // below-gap light that leaves the cell
    double passed_through = 0; // above-gap light that leaves unabsorbed
    double absorbed_current = 0; // mA/cm^2
    // incident minus every term: zero up to rounding.
    double unbooked() const
    {
      return incident - reflected - shaded - parasitic - absorbed - below_gap - passed_through;
    }
    OpticalBudget &operator*=(double s);
    OpticalBudget &operator+=(const OpticalBudget &b);
  };

  // The optical stack of one column of the period (gap, electron finger,
  // hole finger), along the light's path; every fraction is wavelength-
  // independent. Interlayers lie between finger and absorber (geometry).
  // Substrate side: light crosses the finger (transmittance T_f, the rest
  // is `shaded`), then the interlayer (absorptance A, `parasitic`), then
  // the absorber; what reaches the free top surface is reflected back with
  // R_b. Film side: light crosses the absorber; at its far side it crosses
  // the interlayer (A), the finger reflects R_b (back across the
  // interlayer), transmits T_f of the rest (`passed_through`) and takes
  // the remainder (`shaded`). Over the gap: no finger, no interlayer.
  struct OpticalColumn
  {
    double absorber_um             = 1; // absorber thickness of the column
    bool   from_substrate          = false;
    bool   finger                  = false;
    double finger_transmittance    = 1;
    double interlayer_absorptance  = 0; // one crossing: 1 - exp(-alpha d)

    // Of the light past the front reflectance, the fraction that reaches
    // the absorber.
    double entering() const;
    // Of the light reaching the absorber's far side: returned for a second
    // pass, absorbed in an interlayer, taken by a finger, and leaving.
    double returned(double back_reflectance) const;
    double parasitic_behind(double back_reflectance) const;
    double shaded_behind(double back_reflectance) const;
    double leaving_behind(double back_reflectance) const;

    // Where the photons of one wavelength incident on the column go, per
    // photon, for a single-pass transmission e = exp(-alpha t) of the
    // absorber; the six fractions add up to 1.
    struct Fractions
    {
      double reflected;    // at the front
      double shaded;       // taken by the finger
      double parasitic;    // absorbed in the interlayer
      double absorbed;     // in the absorber, both passes
      double transmitted;  // out through the far side
      double escaped;      // back out of the front after the reflected pass
    };
    Fractions fractions(double front_reflectance, double back_reflectance, double e) const;
  };

  // The budget of one column, per unit footprint of that column, from the
  // whole spectrum (below the gap included) at the given intensity.
  OpticalBudget
  column_budget(const Spectrum         &spectrum,
                const AboveGapSpectrum &above_gap,
                const OpticalColumn    &column,
                double                  intensity_suns,
                double                  front_reflectance,
                double                  back_reflectance);

  // --------------------------------------------------------- case file

  // Section "Illumination" of the case file. The generation model is
  // chosen by name (`model`, the entry "Generation model") among the
  // models registered in fem/physics/registry.cc, each of which declares
  // and reads its own entries. The named members after `side` belong to the
  // shipped models; they stay named because tests and callers set them
  // directly. A model added later keeps its values in `model_numbers` and
  // `model_files`, keyed by entry name.
  struct IlluminationParameters
  {
    enum class Side
    {
      film,
      substrate
    };

    std::string           model = "spectrum";
    double                intensity_suns         = 1;
    Side                  side                   = Side::film;
    double                finger_transmittance   = 0.85;
    std::filesystem::path spectrum_file;          // resolved path
    std::filesystem::path optical_constants_file; // resolved path
    std::filesystem::path depth_table_file;       // resolved path, or empty
    double                front_reflectance      = 0;
    double                back_reflectance       = 0;
    double                uniform_rate_per_cm3_s = 1e21;
    // Absorption coefficients of the interlayers, cm^-1 (wavelength-
    // independent; light they absorb is booked as parasitic).
    double                electron_interlayer_alpha_per_cm = 0;
    double                hole_interlayer_alpha_per_cm     = 0;
    std::map<std::string, double>                model_numbers;
    std::map<std::string, std::filesystem::path> model_files;

    // The data files shipped with backcomb (data/ of the source tree).
    IlluminationParameters();

    static void
    declare_parameters(dealii::ParameterHandler &prm);
    // Relative file names are resolved against `base_folder` (the case
    // file's folder); empty file names select the shipped data files.
    void
    parse_parameters(dealii::ParameterHandler    &prm,
                     const std::filesystem::path &base_folder = {});
  };

  // The path in the file-name entry `name` of the current section:
  // `fallback` if the entry is empty, relative names resolved against
  // `base_folder` (the case file's folder).
  std::filesystem::path
  case_file_path(const dealii::ParameterHandler &prm,
                 const std::string              &name,
                 const std::filesystem::path    &base_folder,
                 const std::filesystem::path    &fallback);

  // Piecewise-linear interpolation in a table sorted by x; `at` must lie
  // inside.
  double
  interpolate(const std::vector<double> &x,
              const std::vector<double> &y,
              double                     at);

  // "lo-hi unit", for messages.
  std::string
  format_range(double lo, double hi, const std::string &unit);

  // Depth-resolved generation from a table file: comment lines start with
  // '#', the first other line is the header
  // "depth_nm,generation_per_cm3_s", then rows of those two columns.
  struct DepthTable
  {
    std::string         file;
    std::vector<double> depth_nm; // strictly increasing, from 0
    std::vector<double> generation_per_cm3_s;
  };
  DepthTable
  read_depth_table(const std::filesystem::path &path);

  // Where the fingers lie along x in one period: the electron finger's
  // centre at x = 0, then its half-width, the gap, the hole finger's
  // half-width. `has_fingers = false` for the verification strip.
  struct FingerLayout
  {
    double electron_finger_half_width_um = 0;
    double gap_um                        = 0;
    double hole_finger_half_width_um     = 0;
    bool   has_fingers                   = true;
    // Interlayers on the fingers, below the absorber (0 = none).
    double electron_interlayer_um        = 0;
    double hole_interlayer_um            = 0;
  };

  // The depth profile of one column, interpolated linearly.
  struct GenerationProfile
  {
    std::vector<double>          depth_um;       // increasing, from 0 to the column's absorber thickness
    std::vector<double>          rate_per_cm3_s; // at those depths, intensity applied
    double                       absorbed_current = 0; // q int G dd, mA/cm^2
    std::optional<double>        photon_current;  // above-gap photon current, if known
  };

  // The generation rate G(x, y) in the absorber, 0 <= y <= t (y = 0 at the
  // substrate). Built once per case; rate() is cheap (interpolation in a
  // precomputed depth profile, accurate to 1e-4 relative).
  class Generation
  {
  public:
    Generation(const IlluminationParameters &parameters,
               double                        band_gap_eV,
               double                        thickness_um,
               const FingerLayout           &layout);

    // cm^-3 s^-1 at a point of the absorber (coordinates in µm).
    double
    rate(double x_um, double y_um) const;

    // cm^-3 s^-1 at a depth below the illuminated surface in the gap's
    // column (no finger, no interlayer).
    double
    rate_at_depth(double depth_um) const;

    // q int_0^t G dd for the gap's column, in mA/cm^2.
    double
    absorbed_current_mA_per_cm2() const
    {
      return absorbed_current_;
    }
    // Photon current above the gap reaching the cell (intensity applied,
    // reflectance not): the upper bound of the absorbed current. Only the
    // spectrum model knows it.
    std::optional<double>
    photon_current_above_gap_mA_per_cm2() const
    {
      return photon_current_;
    }
    // Fraction of the incident light that the fingers let through, averaged
    // over the period (1 when lit from the film side).
    double
    period_average_transmittance() const;

    // The optical side of the power balance; only the spectrum model knows
    // the incident power.
    std::optional<OpticalBudget>
    optical_budget() const;

    // Spectral response (spectrum model only, else empty): the above-gap
    // wavelengths of the optical model, nm, and their photon flux at the
    // case's intensity, cm^-2 s^-1 nm^-1.
    const std::vector<double> &
    wavelengths_nm() const
    {
      return spectral_.wavelength_nm;
    }
    std::vector<double>
    incident_photon_flux() const;
    // For every wavelength i, adds weight * a_i(x, y) to acc[i]: a_i is the
    // pairs generated per unit volume at (x, y) of the absorber per photon
    // incident per unit area, in um^-1 (G_i = Phi_i a_i).
    void
    add_pair_densities(double x_um, double y_um, double weight, std::vector<double> &acc) const;
    // Per wavelength, averaged over the period: the fractions of the
    // incident photons absorbed in the absorber, reflected (at the front,
    // and leaving the front after the reflected pass) and transmitted
    // (through the far side). The rest is taken by fingers and interlayers.
    struct SpectralFractions
    {
      std::vector<double> absorbed, reflected, transmitted;
    };
    SpectralFractions
    spectral_fractions() const;

  private:
    // One column of the period: its optical stack, the interlayer below
    // its absorber, the depth profile and (spectrum model) its budget.
    struct Column
    {
      OpticalColumn                optics;
      double                       interlayer_um = 0;
      GenerationProfile            profile;
      std::optional<OpticalBudget> budget;
    };
    const Column &
    column_at(double x_um) const;

    double                thickness_um_;
    bool                  from_substrate_;
    double                finger_transmittance_;
    FingerLayout          layout_;
    std::array<Column, 3> columns_; // gap, electron finger, hole finger
    // Column widths of the period (gap, electron and hole finger halves).
    std::array<double, 3> column_widths() const;
    AboveGapSpectrum      spectral_; // empty unless the spectrum model
    double                intensity_suns_    = 1;
    double                front_reflectance_ = 0;
    double                back_reflectance_  = 0;
    double                absorbed_current_ = 0;
    std::optional<double> photon_current_;
  };
} // namespace backcomb::fem
