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

  void
  GeometryParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(geometry_section);
    prm.declare_entry("Layout",
                      "comb period",
                      dealii::Patterns::Selection("comb period|test strip"),
                      "Simulated cross-section: 'comb period' is one "
                      "symmetric electrode period (centre of an electron "
                      "finger to centre of a hole finger); 'test strip' is "
                      "a rectangle with the electron contact at its left "
                      "end and the hole contact at its right end.");
    declare_number(prm,
                   "Electron finger width",
                   "10",
                   "Full width of an electron-selective finger, in um; "
                   "> 0.");
    declare_number(prm,
                   "Hole finger width",
                   "10",
                   "Full width of a hole-selective finger, in um; > 0.");
    declare_number(prm,
                   "Gap",
                   "20",
                   "Distance between neighbouring electron and hole "
                   "fingers, in um; > 0.");
    declare_number(prm,
                   "Absorber thickness",
                   "0.4",
                   "Film thickness from the substrate to the top surface, "
                   "in um; > 0.");
    declare_number(prm,
                   "Electron interlayer thickness",
                   "0",
                   "Thickness of the electron transport layer over the "
                   "electron fingers, in nm; >= 0 and below the absorber "
                   "thickness (0 = no interlayer; comb period only).");
    declare_number(prm,
                   "Hole interlayer thickness",
                   "0",
                   "Thickness of the hole transport layer over the hole "
                   "fingers, in nm; >= 0 and below the absorber thickness "
                   "(0 = no interlayer; comb period only).");
    declare_number(prm,
                   "Strip length",
                   "10",
                   "Length of the test strip between its two end contacts, "
                   "in um; > 0 (test strip only).");
    declare_number(prm,
                   "Junction position",
                   "0",
                   "Distance of the junction from the left end of the test "
                   "strip, in um; >= 0 and below the strip length (0 = one "
                   "region; test strip only).");
    prm.leave_subsection();
  }

  void
  GeometryParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(geometry_section);
    const std::string &s = geometry_section;
    layout = prm.get("Layout") == "test strip" ? Layout::test_strip :
                                                 Layout::comb_period;
    electron_finger_width_um = get_positive(prm, s, "Electron finger width");
    hole_finger_width_um     = get_positive(prm, s, "Hole finger width");
    gap_um                   = get_positive(prm, s, "Gap");
    absorber_thickness_um    = get_positive(prm, s, "Absorber thickness");
    electron_interlayer_nm =
      get_nonnegative(prm, s, "Electron interlayer thickness");
    hole_interlayer_nm = get_nonnegative(prm, s, "Hole interlayer thickness");
    strip_length_um    = get_positive(prm, s, "Strip length");
    junction_position_um = get_nonnegative(prm, s, "Junction position");
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

  void
  MeshParameters::declare_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(mesh_section);
    declare_number(prm,
                   "Smallest cell",
                   "2",
                   "Size of the cells at the finger edges and at the "
                   "bottom contacts (in both directions), in nm; > 0 and "
                   "no larger than the gap, the absorber thickness and "
                   "half a finger width.");
    declare_number(prm,
                   "Growth ratio",
                   "1.25",
                   "Largest size ratio of neighbouring cells; in (1, 3].");
    declare_number(prm,
                   "Largest lateral cell",
                   "2",
                   "Largest cell size along the substrate, in um; > 0 and "
                   "no smaller than the smallest cell.");
    declare_number(prm,
                   "Largest vertical cell",
                   "20",
                   "Largest cell size across the film, in nm; > 0 and no "
                   "smaller than the smallest cell.");
    prm.leave_subsection();
  }

  void
  MeshParameters::parse_parameters(dealii::ParameterHandler &prm)
  {
    prm.enter_subsection(mesh_section);
    const std::string &s = mesh_section;
    smallest_cell_nm     = get_positive(prm, s, "Smallest cell");
    growth_ratio         = get_in_range(prm, s, "Growth ratio", 1, 3);
    if (growth_ratio == 1)
      throw InputError(path(s, "Growth ratio"),
                       prm.get("Growth ratio"),
                       "must be larger than 1");
    largest_lateral_cell_um  = get_positive(prm, s, "Largest lateral cell");
    largest_vertical_cell_nm = get_positive(prm, s, "Largest vertical cell");
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
