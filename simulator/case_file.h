// The complete case: every section of a backcomb case file, read from a
// deal.II ParameterHandler text file plus command-line overrides
// ("Section/Name=value"). Errors name the file, the line (when the entry
// appears in the file), the entry and the value.
#pragma once

#include "fem/comb_electrodes.h"
#include "fem/device.h"
#include "fem/material.h"
#include "fem/optics.h"
#include "geometry/parameters.h"
#include "simulator/fabrication.h"

#include <deal.II/base/parameter_handler.h>

#include <istream>
#include <string>
#include <vector>

namespace backcomb::simulator
{
  // Section "Device": conditions and the definition of the active area.
  struct DeviceSettings
  {
    double temperature = 300.0; // K
    // Which width counts as "active" for the per-active-area metrics.
    enum class ActiveArea { gap, period } active_area = ActiveArea::gap;
  };

  // Section "J-V scan": the bias scan of one J-V curve.
  struct JVSettings
  {
    double start = -0.1, stop = 1.3, step = 0.02; // V
    bool   reverse      = false;  // scan from stop to start
    bool   dark         = true;   // also a dark J-V
    double refine_to    = 0.002;  // V, step near the maximum power point
    // Light factors (of the case's intensity) at which V_oc is found for
    // the suns-V_oc pseudo J-V; empty: none.
    std::vector<double> suns_voc{1.0, 0.3, 0.1, 0.03, 0.01, 0.003, 0.001};
  };

  // Section "Output".
  struct OutputSettings
  {
    std::string         folder = "backcomb-out";
    bool                fields = true;
    std::vector<double> field_biases{0.0}; // V at which fields are written
    double              dead_zone_threshold = 0.5; // f_c below this is dead
    std::vector<double> loss_biases;       // V, "Power balance biases": besides SC, MPP, OC
    bool                eqe_without_bias_light = false;
  };

  // Section "Hysteresis scan" (fem/ion_scan.h); rate 0: no such scan.
  struct HysteresisScanSettings
  {
    double      rate              = 0;    // V/s
    std::string directions        = "reverse then forward";
    double      precondition_bias = 1.2;  // V
    double      precondition_time = 10;   // s
    double      tolerance         = 0.02; // kT/q
    unsigned    snapshots         = 5;    // per direction
  };

  struct Case
  {
    std::string                  file;   // path as given
    std::string                  echo;   // the case file text (for summary.json)
    geometry::GeometryParameters geometry;
    geometry::MeshParameters     mesh;
    fem::Material                absorber, electron_interlayer, hole_interlayer;
    fem::ContactParameters       electron_contact, hole_contact;
    fem::SurfaceParameters       top_surface, gap_interface;
    fem::IlluminationParameters  illumination;
    fem::NumericsParameters      numerics;
    fem::ElectrodeParameters     electrodes;
    DeviceSettings               device;
    JVSettings                   jv;
    HysteresisScanSettings       hysteresis;
    OutputSettings               output;
    FabricationSettings          fabrication;
    std::vector<std::string>     overrides;
  };

  // Declares every section with the documented defaults.
  void declare_case(dealii::ParameterHandler &prm);

  // The complete annotated defaults, as a case file.
  std::string default_case_text();

  // Every entry's path "Section/Subsection/Name", one per entry (for
  // `template --paths` and the shell completion of --set and --vary).
  std::vector<std::string> entry_paths();

  // Reads `file`, applies the overrides in order and checks everything.
  // Throws InputError with a message "file:line: Section/Name = value: why".
  Case read_case(const std::string &file, const std::vector<std::string> &overrides);

  // The same with the case text from a stream; `file` names it in messages
  // and relative data-file paths are resolved against its folder.
  Case read_case(std::istream &case_text, const std::string &file,
                 const std::vector<std::string> &overrides);

  // The value of entry `path` ("Section/Name") in the case's text with
  // its overrides applied, as written (InputError for an unknown entry).
  std::string entry_value(const Case &c, const std::string &path);

  // Splits "Section/Sub/Name=value" into path and value; throws InputError.
  // Why `path` ("Section/Subsection/Name") is not an entry of the case
  // file: an unknown section or entry, with the nearest declared names
  // (edit distance); "" when it is an entry.
  std::string unknown_entry_reason(const std::string &path);

  std::pair<std::string, std::string> split_override(const std::string &text);

  // "Section/Sub/Name=value" as case-file text: the subsection blocks
  // around one `set` line (appended to a case, it overrides the entry).
  std::string override_as_text(const std::string &override);
} // namespace backcomb::simulator
