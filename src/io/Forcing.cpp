#include "reachwise/io/Forcing.hpp"

#include <algorithm>
#include <cmath>

#include <fmt/format.h>

#include "reachwise/Error.hpp"

namespace reachwise::io {

std::string_view kindName(ForcingKind kind) {
  return kind == ForcingKind::Inflow ? "inflow" : "lateral";
}

std::string dischargeProblem(double q_m3s) {
  if (!std::isfinite(q_m3s)) return fmt::format("discharge {} is not finite", q_m3s);
  if (q_m3s < 0) return fmt::format("discharge {} is negative", q_m3s);
  return fmt::format("discharge {:g} m3/s is above the largest this program reads, {:g} m3/s (a unit or typing "
                     "error?)",
                     q_m3s, kMaxDischarge_m3s);
}

std::vector<std::string> ForcingSource::ids() const {
  std::vector<std::string> all = ids(ForcingKind::Inflow);
  const std::vector<std::string> lat = ids(ForcingKind::Lateral);
  all.insert(all.end(), lat.begin(), lat.end());
  std::sort(all.begin(), all.end());
  all.erase(std::unique(all.begin(), all.end()), all.end());
  return all;
}

MemoryForcingSource::MemoryForcingSource(Forcing forcing) : forcing_(std::move(forcing)) {
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    for (auto& [id, values] : forcing_.series(kind)) {
      if (values.size() != forcing_.axis.steps)
        throw InvalidParameter(std::string(kindName(kind)),
                               fmt::format("reach {}: {} values on an axis of {} steps", id,
                                           values.size(), forcing_.axis.steps));
      for (double& q : values) {
        const double readable = readableDischarge(q);
        if (std::isnan(readable))
          throw InvalidParameter(std::string(kindName(kind)), fmt::format("reach {}: {}", id, dischargeProblem(q)));
        q = readable;
      }
    }
  }
}

bool ForcingSource::series(ForcingKind kind, std::string_view id, std::vector<double>& out) const {
  std::vector<double> values(axis().steps);
  if (!fill(kind, id, values)) return false;
  out = std::move(values);
  return true;
}

bool MemoryForcingSource::fill(ForcingKind kind, std::string_view id, std::span<double> out) const {
  REACHWISE_ASSERT(out.size() == forcing_.axis.steps);
  const SeriesMap& map = forcing_.series(kind);
  const auto it = map.find(id);
  if (it == map.end()) {
    std::fill(out.begin(), out.end(), 0.0);
    return false;
  }
  std::copy(it->second.begin(), it->second.end(), out.begin());
  return true;
}

std::vector<std::string> MemoryForcingSource::ids(ForcingKind kind) const {
  std::vector<std::string> out;
  out.reserve(forcing_.series(kind).size());
  for (const auto& entry : forcing_.series(kind)) out.push_back(entry.first);
  return out;
}

void requireKnownReaches(const ForcingSource& source,
                         const std::function<bool(std::string_view)>& known,
                         const std::function<std::string(std::string_view)>& hint) {
  std::vector<std::string> parts, hints;
  std::string first_file;
  std::size_t count = 0;
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    std::vector<std::string> unknown;
    source.visitIds(kind, [&](std::string_view id) {
      if (!known(id)) unknown.emplace_back(id);
    });
    if (unknown.empty()) continue;
    std::sort(unknown.begin(), unknown.end());  // the message in id order, whatever the source's
    for (const std::string& id : unknown) {
      std::string h = hint ? hint(id) : std::string();
      if (!h.empty() && std::find(hints.begin(), hints.end(), h) == hints.end()) hints.push_back(std::move(h));
    }
    const std::string file = source.origin(kind);
    if (first_file.empty()) first_file = file;
    count += unknown.size();
    parts.push_back(fmt::format("{} {}{}: {}", kindName(kind), file.empty() ? "" : "file ",
                                file, fmt::join(unknown, ", ")));
  }
  if (count == 0) return;
  InputLocation where;
  where.file = first_file;
  throw InputError(where, fmt::format("{} reach id{} not in the network ({}){}{}", count,
                                      count == 1 ? " is" : "s are", fmt::join(parts, "; "),
                                      hints.empty() ? "" : "; ", fmt::join(hints, "; ")));
}

void requireKnownReaches(const ForcingSource& source, const std::set<std::string, std::less<>>& known) {
  requireKnownReaches(source, [&known](std::string_view id) { return known.contains(id); });
}

}  // namespace reachwise::io
