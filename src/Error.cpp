#include "reachwise/Error.hpp"

namespace reachwise {

std::string InputLocation::describe() const {
  std::string out;
  auto add = [&out](const std::string& part) {
    if (part.empty()) return;
    if (!out.empty()) out += ", ";
    out += part;
  };
  add(file);
  if (!layer.empty()) add("layer " + layer);
  if (line) add("line " + std::to_string(*line));
  if (fid) add("feature " + std::to_string(*fid));
  if (!reach_id.empty()) add("reach " + reach_id);
  if (!lake_id.empty()) add("lake " + lake_id);
  if (!gauge_id.empty()) add("gauge " + gauge_id);
  if (!field.empty()) add("field " + field);
  if (!time.empty()) add("time " + time);
  return out;
}

std::string InputError::compose(const InputLocation& where, const std::string& message) {
  const std::string at = where.describe();
  return at.empty() ? message : at + ": " + message;
}

}  // namespace reachwise
