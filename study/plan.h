// The grid of a study: the cartesian product of the varied entries' values,
// each point a case with its own folder name and overrides, and the plan
// saved as FOLDER/sweep-plan.json.
#pragma once

#include "simulator/fabrication.h"
#include "study/uncertainty.h"
#include "study/values.h"

#include <nlohmann/json.hpp>

#include <limits>
#include <optional>
#include <string>
#include <vector>

namespace backcomb::study
{
  // At most this many cases per grid.
  constexpr std::size_t max_cases = 100000;

  struct StudyCase
  {
    std::string              id;        // folder name under cases/
    std::vector<std::string> values;    // one per varied entry
    std::vector<std::string> overrides; // the --set list plus the varied values
    // Electrode pitch w_e + w_h + 2 g (centre to centre of neighbouring
    // fingers of the same polarity), NaN for the test strip.
    double pitch_um = std::numeric_limits<double>::quiet_NaN();
    // The gap g between the fingers (Geometry/Gap), NaN for the test strip.
    double gap_um = std::numeric_limits<double>::quiet_NaN();
    // The sample of the uncertain entries this case solves (an index into
    // StudyPlan::samples.values); nothing when no entry is sampled.
    std::optional<std::size_t> sample;
    // result_fingerprint() of the plan's case text and these overrides:
    // the fingerprint a summary.json of this case must carry.
    std::string fingerprint;
  };

  struct StudyPlan
  {
    std::string              case_file; // as given on the command line
    std::string              case_text; // its content, to detect a changed case on resume
    std::vector<std::string> sets;      // the --set overrides common to all cases
    // The --vary entries in order, each followed by the --in-step entries
    // that move with it. The first entry is always a --vary entry.
    std::vector<StudyEntry> entries;
    // The cartesian product of the --vary entries' values (an --in-step
    // entry takes the value of the same position as its --vary entry); the
    // first entry varies fastest, so the cases of one line of the plot are
    // consecutive. With sampled entries the samples are the outermost
    // axis: the whole grid for sample 0, then for sample 1, ...
    std::vector<StudyCase> cases;
    // The uncertain entries and their sampled values (--uncertain,
    // --uncertain-from); inactive when none is given.
    SampleSet samples;
    // The case's Fabrication section (with the --set list), which the
    // recommendation applies; the same for every case.
    simulator::FabricationSettings fabrication;
  };

  // An --in-step "Section/Name=VALUES" argument and the number of --vary
  // arguments given before it on the command line: it moves with the last
  // of those (0: none, an error).
  struct InStepArgument
  {
    std::size_t after_vary = 0;
    std::string text;
  };

  // The number of --vary entries (the axes of the grid).
  std::size_t axis_count(const StudyPlan &plan);

  // Builds the grid and checks every grid point with read_case, so that an
  // invalid entry or value is reported (InputError) before anything is
  // written. A point whose physics fails later is just a failed case. The
  // entries' units come from entry_unit().
  // --in-step entries: errors (InputError naming the option, the entry and
  // the value) for an entry not following a --vary, a value count other
  // than its --vary entry's, an entry linked to itself, linked twice, also
  // given with --vary or --set. Entries of the Fabrication section cannot
  // be varied (they apply to the whole sweep).
  // Uncertain entries (make_samples): each sample is solved at every grid
  // point; each sample's value of each entry is checked with read_case (an
  // InputError names the entry, its distribution and the value). An
  // uncertain entry cannot also be given with --set, --vary or --in-step,
  // nor twice, nor be in the Fabrication section.
  StudyPlan make_plan(const std::string                 &case_file,
                      const std::vector<std::string>    &sets,
                      const std::vector<std::string>    &vary,
                      const std::vector<InStepArgument> &in_step     = {},
                      const UncertaintyArguments        &uncertainty = {});

  // The number of grid points (cases per sample; all cases without samples).
  std::size_t grid_size(const StudyPlan &plan);

  // A sampled value as it is written into a case's override: all 17
  // significant digits, so the case reads back the very double sampled.
  std::string sample_text(double value);

  // The plan as stored in sweep-plan.json, and back (InputError naming
  // `file` when it is not a plan or is damaged).
  nlohmann::json plan_to_json(const StudyPlan &plan);
  StudyPlan      plan_from_json(const nlohmann::json &j, const std::string &file);

  // FOLDER/sweep-plan.json read back.
  StudyPlan read_plan(const std::string &folder);

  // Why `existing` (the plan found in a folder) is not `wanted`, or "" when
  // they describe the same cases.
  std::string plan_difference(const StudyPlan &existing, const StudyPlan &wanted);
} // namespace backcomb::study
