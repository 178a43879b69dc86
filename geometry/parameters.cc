#include "geometry/parameters.h"

#include "base/entries.h"

#include <sstream>

namespace backcomb::geometry
{
  namespace
  {
    const std::string geometry_section = "Geometry";
    const std::string mesh_section     = "Mesh";

    std::string
    to_text(const double v)
    {
      std::ostringstream s;
      s << v;
      return s.str();
    }

    std::string
    path(const std::string &section, const std::string &name)
    {
      return section + "/" + name;
    }
  } // namespace

  namespace
  {
    // The numeric entries of section "Geometry", each described once: the
    // declaration (and so `backcomb template`) and the check in
    // parse_parameters() both come from these.
    const NumberEntry electron_finger_width{
      "Electron finger width", 10, "um", Range::greater_than(0),
      "Full width of an electron-selective finger"};
    const NumberEntry hole_finger_width{
      "Hole finger width", 10, "um", Range::greater_than(0),
      "Full width of a hole-selective finger"};
    const NumberEntry gap{
      "Gap", 20, "um", Range::greater_than(0),
      "Distance between neighbouring electron and hole fingers"};
    const NumberEntry absorber_thickness{
      "Absorber thickness", 0.4, "um", Range::greater_than(0),
      "Film thickness from the substrate to the top surface"};
    const NumberEntry electron_interlayer{
      "Electron interlayer thickness", 0, "nm", Range::at_least(0),
      "Thickness of the electron transport layer over the electron fingers; "
      "below the absorber thickness (0 = no interlayer; comb period only)"};
    const NumberEntry hole_interlayer{
      "Hole interlayer thickness", 0, "nm", Range::at_least(0),
      "Thickness of the hole transport layer over the hole fingers; below the "
      "absorber thickness (0 = no interlayer; comb period only)"};
    const NumberEntry strip_length{
      "Strip length", 10, "um", Range::greater_than(0),
      "Length of the test strip between its two end contacts (test strip only)"};
    const NumberEntry junction_position{
      "Junction position", 0, "um", Range::at_least(0),
      "Distance of the junction from the left end of the test strip; below "
      "the strip length (0 = one region; test strip only)"};
  } // namespace

  void
  GeometryParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    const std::string &s = geometry_section;
    prm.enter_subsection(s);
    declare_text(prm,
                 s,
                 "Layout",
                 "comb period",
                 dealii::Patterns::Selection("comb period|test strip"),
                 "",
                 "Simulated cross-section: 'comb period' is one symmetric "
                 "electrode period (centre of an electron finger to centre of "
                 "a hole finger); 'test strip' is a rectangle with the "
                 "electron contact at its left end and the hole contact at "
                 "its right end.");
    for (const NumberEntry *e : {&electron_finger_width,
                                 &hole_finger_width,
                                 &gap,
                                 &absorber_thickness,
                                 &electron_interlayer,
                                 &hole_interlayer,
                                 &strip_length,
                                 &junction_position})
      declare(prm, s, *e);
    prm.leave_subsection();
  }

  void
  GeometryParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    const std::string &s = geometry_section;
    prm.enter_subsection(s);
    layout = prm.get("Layout") == "test strip" ? Layout::test_strip :
                                                 Layout::comb_period;
    electron_finger_width_um = get(prm, s, electron_finger_width);
    hole_finger_width_um     = get(prm, s, hole_finger_width);
    gap_um                   = get(prm, s, gap);
    absorber_thickness_um    = get(prm, s, absorber_thickness);
    electron_interlayer_nm   = get(prm, s, electron_interlayer);
    hole_interlayer_nm       = get(prm, s, hole_interlayer);
    strip_length_um          = get(prm, s, strip_length);
    junction_position_um     = get(prm, s, junction_position);
    prm.leave_subsection();
    validate();
  }

  void
  GeometryParameters::validate() const
  {
    const double t_nm = 1000 * absorber_thickness_um;
    const auto   check_interlayer = [&](const std::string &name,
                                      const double       thickness_nm) {
      if (thickness_nm >= t_nm)
        throw InputError(path(geometry_section, name),
                         to_text(thickness_nm),
                         "must be smaller than " +
                           path(geometry_section, "Absorber thickness") +
                           " = " + to_text(absorber_thickness_um) + " um (" +
                           to_text(t_nm) + " nm)");
      if (layout == Layout::test_strip && thickness_nm > 0)
        throw InputError(path(geometry_section, name),
                         to_text(thickness_nm),
                         "interlayers exist only in the 'comb period' "
                         "layout, but Geometry/Layout = test strip");
    };
    check_interlayer("Electron interlayer thickness", electron_interlayer_nm);
    check_interlayer("Hole interlayer thickness", hole_interlayer_nm);

    if (layout == Layout::test_strip &&
        junction_position_um >= strip_length_um)
      throw InputError(path(geometry_section, "Junction position"),
                       to_text(junction_position_um),
                       "must be smaller than " +
                         path(geometry_section, "Strip length") + " = " +
                         to_text(strip_length_um) + " um");
  }

  double
  GeometryParameters::width_um() const
  {
    if (layout == Layout::test_strip)
      return strip_length_um;
    return electron_finger_width_um / 2 + gap_um + hole_finger_width_um / 2;
  }

  namespace
  {
    // The entries of section "Mesh".
    const NumberEntry smallest_cell{
      "Smallest cell", 2, "nm", Range::greater_than(0),
      "Size of the cells at the finger edges and at the bottom contacts (in "
      "both directions); no larger than the gap, the absorber thickness and "
      "half a finger width"};
    const NumberEntry growth_ratio_entry{
      "Growth ratio", 1.25, "", Range::above(1, 3),
      "Largest size ratio of neighbouring cells"};
    const NumberEntry largest_lateral_cell{
      "Largest lateral cell", 2, "um", Range::greater_than(0),
      "Largest cell size along the substrate; no smaller than the smallest "
      "cell"};
    const NumberEntry largest_vertical_cell{
      "Largest vertical cell", 20, "nm", Range::greater_than(0),
      "Largest cell size across the film; no smaller than the smallest cell"};
  } // namespace

  void
  MeshParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(mesh_section);
    for (const NumberEntry *e : {&smallest_cell,
                                 &growth_ratio_entry,
                                 &largest_lateral_cell,
                                 &largest_vertical_cell})
      declare(prm, mesh_section, *e);
    prm.leave_subsection();
  }

  void
  MeshParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    const std::string &s = mesh_section;
    prm.enter_subsection(s);
    smallest_cell_nm         = get(prm, s, smallest_cell);
    growth_ratio             = get(prm, s, growth_ratio_entry);
    largest_lateral_cell_um  = get(prm, s, largest_lateral_cell);
    largest_vertical_cell_nm = get(prm, s, largest_vertical_cell);
    prm.leave_subsection();
    validate();
  }

  void
  MeshParameters::validate() const
  {
    const std::string smallest =
      path(mesh_section, "Smallest cell") + " = " + to_text(smallest_cell_nm) +
      " nm";
    if (1000 * largest_lateral_cell_um < smallest_cell_nm)
      throw InputError(path(mesh_section, "Largest lateral cell"),
                       to_text(largest_lateral_cell_um),
                       "must not be smaller than " + smallest);
    if (largest_vertical_cell_nm < smallest_cell_nm)
      throw InputError(path(mesh_section, "Largest vertical cell"),
                       to_text(largest_vertical_cell_nm),
                       "must not be smaller than " + smallest);
  }

  void
  MeshParameters::validate(const GeometryParameters &geometry) const
  {
    validate();
    // Each check names the geometric length (in um) that the smallest cell
    // has to fit into.
    const auto check = [&](const double       length_um,
                           const std::string &what) {
      if (smallest_cell_nm > 1000 * length_um)
        throw InputError(path(mesh_section, "Smallest cell"),
                         to_text(smallest_cell_nm),
                         "is larger than " + what + " = " +
                           to_text(length_um) + " um");
    };
    check(geometry.absorber_thickness_um,
          path(geometry_section, "Absorber thickness"));
    if (geometry.layout == GeometryParameters::Layout::comb_period)
      {
        check(geometry.gap_um, path(geometry_section, "Gap"));
        check(geometry.electron_finger_width_um / 2,
              "half of " + path(geometry_section, "Electron finger width"));
        check(geometry.hole_finger_width_um / 2,
              "half of " + path(geometry_section, "Hole finger width"));
      }
    else
      {
        const double xj = geometry.junction_position_um;
        if (xj > 0)
          {
            check(xj, path(geometry_section, "Junction position"));
            check(geometry.strip_length_um - xj,
                  "the strip length right of the junction (" +
                    path(geometry_section, "Strip length") + " - " +
                    path(geometry_section, "Junction position") + ")");
          }
        else
          check(geometry.strip_length_um,
                path(geometry_section, "Strip length"));
      }
  }
} // namespace backcomb::geometry
