// Where the power goes: the free-energy balance of the solver at chosen
// operating points (fem::PowerBalance), the optical side before it
// (fem::OpticalBudget), as losses.csv, a block of summary.json and a bar
// chart.
#pragma once

#include "fem/drift_diffusion.h"
#include "fem/optics.h"

#include <nlohmann/json.hpp>

#include <optional>
#include <string>
#include <vector>

namespace backcomb::postprocess
{
  // One operating point: "short_circuit", "max_power", "open_circuit" or
  // "bias_<V>".
  struct LossPoint
  {
    std::string       name;
    fem::PowerBalance balance;
  };

  // One term of the balance, mW/cm^2 of footprint.
  struct LossTerm
  {
    std::string name;
    std::string category; // optical, generation, recombination, contact, transport, output, check
    double      value;
  };

  // The terms at one point in a fixed order: the optical side (if known),
  // the deficit of the splitting below the band gap, the losses, the output
  // and the residual. Together they add up to the incident power (or, with
  // no optical side, to the band-edge input).
  std::vector<LossTerm> loss_terms(const LossPoint &p, const std::optional<fem::OpticalBudget> &optics);

  // Losses in the electrodes of the whole comb cell at its own maximum
  // power point (fem::CombCell), mW/cm^2 of footprint.
  struct ElectrodeLoss
  {
    double bias_V = 0, current = 0, output = 0;
    double hole_fingers = 0, electron_fingers = 0, hole_contact = 0, electron_contact = 0;
    std::vector<LossTerm> terms() const;
  };

  // Recombination, film transport (Joule), contacts, for the sweep table.
  struct LossSplit
  {
    double recombination = 0, film_joule = 0, contacts = 0;
  };
  LossSplit loss_split(const fem::PowerBalance &b);

  // Tidy table, one row per point and term.
  std::string losses_csv(const std::vector<LossPoint> &points, const std::optional<fem::OpticalBudget> &optics,
                         double footprint_um, const std::optional<ElectrodeLoss> &electrodes = std::nullopt);

  nlohmann::json losses_json(const std::vector<LossPoint> &points,
                             const std::optional<fem::OpticalBudget> &optics);

  // Horizontal bars of the terms at one point (percent of the incident
  // power when known, else mW/cm^2), `stem`.svg and .png; returns the files
  // written, problems go to `warnings`.
  // The electrodes' terms, when given, are added as bars of their own.
  std::vector<std::string> write_loss_chart(const LossPoint &p, const std::optional<fem::OpticalBudget> &optics,
                                            const std::optional<ElectrodeLoss> &electrodes,
                                            const std::string &title, const std::string &stem,
                                            std::vector<std::string> &warnings);
} // namespace backcomb::postprocess
