// Case-file parameters of the geometry stage: the shape of the simulated
// cross-section (section "Geometry") and the grading of its mesh (section
// "Mesh"). Values are kept in the units of the case file; the member names
// carry the unit.
#pragma once

#include <deal.II/base/parameter_handler.h>

namespace backcomb::geometry
{
  struct GeometryParameters
  {
    enum class Layout
    {
      // One symmetric period: centre of an electron finger to centre of a
      // hole finger.
      comb_period,
      // A plain rectangle with the contacts at its two ends (verification).
      test_strip
    };

    Layout layout                 = Layout::comb_period;
    double electron_finger_width_um = 10;
    double hole_finger_width_um     = 10;
    double gap_um                   = 20;
    double absorber_thickness_um    = 0.4;
    double electron_interlayer_nm   = 0;
    double hole_interlayer_nm       = 0;
    double strip_length_um          = 10;
    double junction_position_um     = 0;

    static void
    declare_parameters(dealii::ParameterHandler &prm);
    void
    parse_parameters(dealii::ParameterHandler &prm);
    // Throws InputError for entries that contradict each other.
    void
    validate() const;

    // Width of the simulated domain: the period's half pitch
    // w_e/2 + g + w_h/2, or the strip length.
    double
    width_um() const;
  };

  struct MeshParameters
  {
    double smallest_cell_nm         = 2;
    double growth_ratio             = 1.25;
    double largest_lateral_cell_um  = 2;
    double largest_vertical_cell_nm = 20;

    static void
    declare_parameters(dealii::ParameterHandler &prm);
    void
    parse_parameters(dealii::ParameterHandler &prm);
    // Contradictions inside the section (largest sizes below the smallest).
    void
    validate() const;
    // Contradictions with the geometry: a smallest cell that does not fit
    // into the gap, the film or a finger half. Called by the mesh builder.
    void
    validate(const GeometryParameters &geometry) const;
  };
} // namespace backcomb::geometry
