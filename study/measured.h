// Measured data of a test substrate, one data set per file, in backcomb's
// own plain format (README, "Calibration"): a header of `key = value`
// lines, then the line `data` and two numeric columns.
//
//   kind = light J-V           light J-V | dark J-V | EQE | Voc vs light
//   columns = V, mA/cm2        the two columns' units (required)
//   current sign = generated positive    or: generated negative (J-V only)
//   device = Geometry/Gap=20   case entries that make this device (repeatable)
//   weight = 1                 optional, > 0
//   sigma = 0.05               optional noise standard deviation, second column's unit
//   label = cell B3            optional, names the set in outputs
//   data
//   0.00  18.1
//
// Everything is converted on reading to V, mA/cm^2 per footprint with the
// generated current positive, nm, fractions and suns. Bad data is an
// InputError naming the file, the line and the value.
#pragma once

#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  enum class DataKind
  {
    light_jv,
    dark_jv,
    eqe,
    voc_vs_light
  };

  // "light J-V", "dark J-V", "EQE", "Voc vs light".
  std::string kind_name(DataKind k);

  struct MeasuredSet
  {
    std::string              file, label;
    std::string              text; // the file as read (its bytes identify a calibration)
    DataKind                 kind = DataKind::light_jv;
    std::vector<std::string> device; // "Section/Name=value" overrides of the base case
    double                   weight = 1;
    std::optional<double>    sigma;  // in the internal unit of y
    // x: V, nm or suns; y: mA/cm^2 (generated positive), fraction or V.
    // Sorted by x, strictly increasing.
    std::vector<double>   x, y;
    std::vector<unsigned> line; // the file line of each point
    std::string x_unit, y_unit; // the internal units, for tables and plots
  };

  MeasuredSet read_measured(const std::string &file);
} // namespace backcomb::study
