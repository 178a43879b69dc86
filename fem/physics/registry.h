// The registry of physics models: a map from the name a case file uses to a
// factory that makes a fresh model object. There is one registry per kind of
// model (bulk recombination channel, surface recombination channel, contact
// model, generation model); the registration lines of all four are in
// registry.cc, one line per model, in the order in which the models are
// declared, evaluated and summed.
//
// Why an explicit list rather than self-registering static objects: the
// physics lives in a static library, and a linker drops an object file that
// nothing references, together with any registration it would have made.
#pragma once

#include "base/errors.h"

#include <functional>
#include <memory>
#include <string>
#include <utility>
#include <vector>

namespace backcomb::fem
{
  class RecombinationChannel;
  class SurfaceChannel;
  class ContactModel;
  class GenerationModel;

  template <typename Base>
  class Registry
  {
  public:
    using Factory = std::function<std::unique_ptr<Base>()>;

    // `kind` names the models in messages ("contact model").
    Registry(std::string kind, std::vector<std::pair<std::string, Factory>> entries)
      : kind(std::move(kind))
      , entries(std::move(entries))
    {}

    // A fresh model of that name. An unknown name is an input error naming
    // `entry` (the case-file entry that chose it, if any), the name and the
    // known names.
    std::unique_ptr<Base>
    create(const std::string &name, const std::string &entry = "") const
    {
      for (const auto &[known, factory] : entries)
        if (known == name)
          return factory();
      const std::string reason = "unknown " + kind + "; known: " + selection(", ");
      if (entry.empty())
        throw InputError(kind + " '" + name + "': " + reason);
      throw InputError(entry, name, reason);
    }

    bool
    contains(const std::string &name) const
    {
      for (const auto &e : entries)
        if (e.first == name)
          return true;
      return false;
    }

    // The registered names in registration order.
    std::vector<std::string>
    names() const
    {
      std::vector<std::string> out;
      for (const auto &e : entries)
        out.push_back(e.first);
      return out;
    }

    // The names joined by `separator`: "selective|ohmic" is the pattern of
    // a selection entry.
    std::string
    selection(const std::string &separator = "|") const
    {
      std::string out;
      for (const auto &e : entries)
        out += (out.empty() ? "" : separator) + e.first;
      return out;
    }

  private:
    std::string                                  kind;
    std::vector<std::pair<std::string, Factory>> entries;
  };

  const Registry<RecombinationChannel> &bulk_recombination_channels();
  const Registry<SurfaceChannel>       &surface_recombination_channels();
  const Registry<ContactModel>         &contact_models();
  const Registry<GenerationModel>      &generation_models();
} // namespace backcomb::fem
