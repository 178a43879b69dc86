#include "postprocess/losses.h"

#include "postprocess/plots.h"

#include "fem/constants.h"

#include <algorithm>
#include <cmath>
#include <iomanip>
#include <sstream>

namespace backcomb::postprocess
{
  using json = nlohmann::json;

  namespace
  {
    const std::vector<std::string> categories = {"optical",   "generation", "recombination", "contact",
                                                 "transport", "electrode",  "output",        "check"};

    std::string
    number(double v)
    {
      std::ostringstream s;
      s << std::setprecision(8) << v;
      return s.str();
    }
  } // namespace

  std::vector<LossTerm>
  loss_terms(const LossPoint &p, const std::optional<fem::OpticalBudget> &optics)
  {
    const fem::PowerBalance &b = p.balance;
    std::vector<LossTerm>    t;
    if (optics)
      {
        t.push_back({"reflected", "optical", optics->reflected});
        t.push_back({"shaded_by_fingers", "optical", optics->shaded});
        t.push_back({"parasitic_interlayers", "optical", optics->parasitic});
        t.push_back({"below_gap", "optical", optics->below_gap});
        t.push_back({"passed_through", "optical", optics->passed_through});
        // Photon energy above the gap, given up as heat as the pairs relax
        // to the band edges.
        t.push_back({"thermalisation", "optical", optics->absorbed - b.band_edge_input});
      }
    // E_g - dmu per generated pair: the entropy of the pairs at the
    // operating point's splitting.
    t.push_back({"splitting_below_gap", "generation", b.band_edge_input - b.input});
    for (const auto &[name, value] : b.bulk_recombination)
      t.push_back({"bulk_" + name, "recombination", value});
    t.push_back({"top_surface", "recombination", b.top_surface});
    t.push_back({"gap_interface", "recombination", b.gap_interface});
    t.push_back({"holes_at_electron_comb", "recombination", b.contact[0][1]});
    t.push_back({"electrons_at_hole_comb", "recombination", b.contact[1][0]});
    t.push_back({"electron_comb_extraction", "contact", b.contact[0][0]});
    t.push_back({"hole_comb_extraction", "contact", b.contact[1][1]});
    t.push_back({"joule_electrons_film", "transport", b.joule_electrons});
    t.push_back({"joule_holes_film", "transport", b.joule_holes});
    t.push_back({"joule_interlayers", "transport", b.joule_interlayers});
    t.push_back({"output", "output", b.output});
    t.push_back({"residual", "check", b.residual()});
    return t;
  }

  std::vector<LossTerm>
  ElectrodeLoss::terms() const
  {
    return {{"hole_fingers", "electrode", hole_fingers},
            {"electron_fingers", "electrode", electron_fingers},
            {"hole_comb_contact_resistance", "electrode", hole_contact},
            {"electron_comb_contact_resistance", "electrode", electron_contact},
            {"output", "output", output}};
  }

  LossSplit
  loss_split(const fem::PowerBalance &b)
  {
    // Minority carriers lost at a comb count as recombination; the
    // majority carriers' crossing as the contact's loss.
    LossSplit s;
    s.recombination = b.recombination() + b.contact[0][1] + b.contact[1][0];
    s.film_joule    = b.joule();
    s.contacts      = b.contact[0][0] + b.contact[1][1];
    return s;
  }

  std::string
  losses_csv(const std::vector<LossPoint> &points, const std::optional<fem::OpticalBudget> &optics,
             const double footprint_um, const std::optional<ElectrodeLoss> &electrodes)
  {
    std::ostringstream csv;
    csv << "# backcomb power balance (free-energy loss analysis), mW/cm^2 of footprint (period width "
        << footprint_um << " um).\n"
        << "# The terms of one point add up to the incident power"
        << (optics ? "" : " (here: to the band-edge input q*G*E_g, no optical side known)")
        << "; 'residual' is what the balance leaves unexplained.\n"
        << "point,bias_V,current_mA_per_cm2,term,category,power_mW_per_cm2,percent_of_incident\n";
    for (const auto &p : points)
      {
        std::vector<LossTerm> terms = loss_terms(p, optics);
        if (optics)
          terms.insert(terms.begin(), {"incident", "optical", optics->incident});
        for (const auto &t : terms)
          csv << p.name << ',' << number(p.balance.bias_V) << ',' << number(p.balance.current) << ',' << t.name
              << ',' << t.category << ',' << number(t.value) << ','
              << (optics && optics->incident > 0 ? number(100 * t.value / optics->incident) : "") << '\n';
      }
    // The whole cell at its own maximum power point: only the electrode
    // terms and its output (the film's terms vary along the fingers).
    if (electrodes)
      for (const auto &t : electrodes->terms())
        csv << "cell_max_power," << number(electrodes->bias_V) << ',' << number(electrodes->current) << ','
            << t.name << ',' << t.category << ',' << number(t.value) << ','
            << (optics && optics->incident > 0 ? number(100 * t.value / optics->incident) : "") << '\n';
    return csv.str();
  }

  json
  losses_json(const std::vector<LossPoint> &points, const std::optional<fem::OpticalBudget> &optics)
  {
    json j;
    j["unit"] = "mW/cm^2 of footprint";
    if (optics)
      j["optical"] = {{"incident", optics->incident},
                      {"reflected", optics->reflected},
                      {"shaded_by_fingers", optics->shaded},
                      {"parasitic_interlayers", optics->parasitic},
                      {"below_gap", optics->below_gap},
                      {"passed_through", optics->passed_through},
                      {"absorbed", optics->absorbed},
                      {"unbooked", optics->unbooked()},
                      {"absorbed_current_mA_per_cm2", optics->absorbed_current}};
    else
      j["optical"] = nullptr;
    json pts = json::object();
    for (const auto &p : points)
      {
        const fem::PowerBalance &b = p.balance;
        json terms = json::object();
        for (const auto &t : loss_terms(p, optics))
          terms[t.name] = t.value;
        const LossSplit s = loss_split(b);
        pts[p.name]       = {{"bias_V", b.bias_V},
                             {"current_mA_per_cm2", b.current},
                             {"band_edge_input", b.band_edge_input},
                             {"free_energy_input", b.input},
                             {"output", b.output},
                             {"terms", terms},
                             {"split", {{"recombination", s.recombination},
                                        {"film_joule", s.film_joule},
                                        {"contacts", s.contacts}}},
                             {"residual_relative_to_input", b.input != 0 ? json(b.residual() / b.input) : json(nullptr)}};
        if (p.photons)
          {
            pts[p.name]["photons"]                      = photons_json(p);
            pts[p.name]["recycled_free_energy_input"] = b.recycled_input;
          }
      }
    j["points"] = pts;
    return j;
  }

  double
  as_current_mA_per_cm2(const double rate_per_cm2_s)
  {
    return 1e3 * constants::q * rate_per_cm2_s;
  }

  namespace
  {
    // Photons out of the top per pair the light makes.
    json
    external_radiative_efficiency(const LossPoint &p)
    {
      return p.optical_generation_mA_per_cm2 > 0
               ? json(as_current_mA_per_cm2(p.photons->escaped_top) / p.optical_generation_mA_per_cm2)
               : json(nullptr);
    }
  } // namespace

  json
  photons_json(const LossPoint &p)
  {
    const fem::PhotonBalance &b = *p.photons;
    return {{"unit", "mA/cm^2 of footprint (q times the photon flux)"},
            {"emitted", as_current_mA_per_cm2(b.emitted)},
            {"reabsorbed", as_current_mA_per_cm2(b.reabsorbed)},
            {"escaped_top", as_current_mA_per_cm2(b.escaped_top)},
            {"into_substrate", as_current_mA_per_cm2(b.lost_substrate)},
            {"unbooked", as_current_mA_per_cm2(b.unbooked())},
            {"recycled_fraction", b.recycled_fraction()},
            {"external_radiative_efficiency", external_radiative_efficiency(p)}};
  }

  std::string
  photons_csv(const std::vector<LossPoint> &points)
  {
    std::ostringstream csv;
    csv << "# backcomb photon balance of the absorber's net radiative emission (photon recycling as transport),\n"
        << "# q times the photon flux in mA/cm^2 of footprint; recycled_fraction = reabsorbed / emitted;\n"
        << "# external_radiative_efficiency = escaped_top / (q * optical generation), at open circuit the "
           "external luminescence yield.\n"
        << "point,bias_V,current_mA_per_cm2,emitted,reabsorbed,escaped_top,into_substrate,unbooked,"
           "recycled_fraction,external_radiative_efficiency\n";
    bool any = false;
    for (const auto &p : points)
      if (p.photons)
        {
          any             = true;
          const json j    = photons_json(p);
          auto       cell = [](const json &v) { return v.is_null() ? std::string() : number(v.get<double>()); };
          csv << p.name << ',' << number(p.balance.bias_V) << ',' << number(p.balance.current);
          for (const char *k : {"emitted", "reabsorbed", "escaped_top", "into_substrate", "unbooked",
                                "recycled_fraction", "external_radiative_efficiency"})
            csv << ',' << cell(j[k]);
          csv << '\n';
        }
    return any ? csv.str() : std::string();
  }

  std::vector<std::string>
  write_loss_chart(const LossPoint &p, const std::optional<fem::OpticalBudget> &optics,
                   const std::optional<ElectrodeLoss> &electrodes, const std::string &title,
                   const std::string &stem, std::vector<std::string> &warnings)
  {
    BarChart chart;
    chart.title          = title;
    chart.category_names.assign(categories.begin(), categories.end() - 1); // no bar for the check
    const double scale   = optics && optics->incident > 0 ? 100 / optics->incident : 1;
    chart.x_label        = optics ? "share of the incident power (%)" : "power (mW/cm²)";
    std::vector<LossTerm> terms = loss_terms(p, optics);
    if (electrodes)
      for (const auto &t : electrodes->terms())
        terms.push_back({t.name + (t.category == "output" ? " (cell)" : ""), t.category, t.value});
    for (const auto &t : terms)
      {
        if (t.category == "check")
          continue;
        chart.labels.push_back(t.name);
        chart.values.push_back(t.value * scale);
        chart.category.push_back(int(std::find(categories.begin(), categories.end(), t.category) -
                                     categories.begin()));
      }
    chart.value_format = "%.3g";
    return write_bar_chart(chart, stem, warnings);
  }
} // namespace backcomb::postprocess
