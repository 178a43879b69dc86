#include "fem/physics/depth_table_generation.h"

#include "base/entries.h"
#include "fem/constants.h"

namespace backcomb::fem
{
  void
  DepthTableGeneration::declare_parameters(dealii::ParameterHandler &prm, const IlluminationParameters &) const
  {
    declare_text(prm, "Illumination", "Depth table file", "", dealii::Patterns::Anything(), "",
                 "Generation rate at 1 sun versus depth below the illuminated surface "
                 "for the depth table model: '#' comment lines, then the header "
                 "'depth_nm,generation_per_cm3_s', then rows depth in nm, G in "
                 "cm^-3 s^-1, interpolated linearly; the table must span the whole "
                 "absorber. Relative paths are relative to the case file's folder.");
  }

  void
  DepthTableGeneration::parse_parameters(dealii::ParameterHandler &prm, const std::filesystem::path &base_folder,
                                         const bool selected, IlluminationParameters &p) const
  {
    p.depth_table_file = case_file_path(prm, "Depth table file", base_folder, {});
    if (selected && p.depth_table_file.empty())
      throw InputError("Illumination/Depth table file", "",
                       "a file is required when 'Generation model' is 'depth table'");
  }

  GenerationProfile
  DepthTableGeneration::profile(const IlluminationParameters &p, double, const OpticalColumn &column) const
  {
    // The table is the absorber's own profile; a column behind a finger and
    // an interlayer receives their transmitted share of it.
    const double suns          = p.intensity_suns * column.entering();
    const double thickness_um  = column.absorber_um;
    const double to_mA_per_cm2 = 1e3 * constants::q * 1e-4;
    const auto   table         = read_depth_table(p.depth_table_file);
    const double needed_nm     = 1e3 * thickness_um;
    if (table.depth_nm.front() > 0 || table.depth_nm.back() < needed_nm)
      throw InputError(table.file, format_range(table.depth_nm.front(), table.depth_nm.back(), "nm"),
                       "the depth table covers too little: " + format_range(0, needed_nm, "nm") +
                         " is needed (the absorber thickness)");
    GenerationProfile g;
    for (std::size_t i = 0; i < table.depth_nm.size(); ++i)
      if (table.depth_nm[i] < needed_nm)
        {
          g.depth_um.push_back(1e-3 * table.depth_nm[i]);
          g.rate_per_cm3_s.push_back(suns * table.generation_per_cm3_s[i]);
        }
    g.depth_um.push_back(thickness_um);
    g.rate_per_cm3_s.push_back(suns * interpolate(table.depth_nm, table.generation_per_cm3_s, needed_nm));
    g.absorbed_current = to_mA_per_cm2 * integrate_trapezoid(g.depth_um, g.rate_per_cm3_s);
    return g;
  }
} // namespace backcomb::fem
