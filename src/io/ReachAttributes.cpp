#include "ReachAttributes.hpp"

#include <fmt/core.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdlib>

namespace reachwise::io::detail {

using network::Problem;
using network::reachProblem;
using network::ProblemList;
using network::ReachRecord;
using network::ProblemCode;
using hydraulics::Shape;

namespace {

std::string trim(std::string s) {
  auto space = [](unsigned char c) { return std::isspace(c) != 0; };
  s.erase(s.begin(), std::find_if_not(s.begin(), s.end(), space));
  s.erase(std::find_if_not(s.rbegin(), s.rend(), space).base(), s.end());
  return s;
}

std::string lower(std::string s) {
  for (auto& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

/// Whole-string number parse; false for text such as "wide" or "3 m".
bool parseNumber(const std::string& raw, double& out) {
  const std::string s = trim(raw);
  if (s.empty()) return false;
  char* end = nullptr;
  out = std::strtod(s.c_str(), &end);
  return end == s.c_str() + s.size();
}

std::string fieldList(const OGRFeatureDefn& defn) {
  std::string out;
  for (int i = 0; i < defn.GetFieldCount(); ++i)
    out += (i ? ", " : "") + std::string(defn.GetFieldDefn(i)->GetNameRef());
  return out.empty() ? "(none)" : out;
}

}  // namespace

ReachAttributes::ReachAttributes(const OGRFeatureDefn& defn, const NetworkConfig& config,
                                 InputLocation where, bool derive_attributes)
    : length_scale_(config.units == units::System::USCustomary ? units::kMetresPerFoot : 1.0),
      discharge_scale_(config.units == units::System::USCustomary ? units::kCubicMetresPerCubicFoot
                                                                  : 1.0),
      derive_attributes_(derive_attributes) {
  for (std::size_t i = 0; i < fields_.size(); ++i) {
    const FieldSpec& spec = config.field(kFieldNames[i]);
    fields_[i] = Field{defn.GetFieldIndex(spec.name.c_str()), &spec};
  }
  auto usable = [&](FieldKey n) { return hasField(n) || field(n).spec->hasDefault(); };
  auto require = [&](FieldKey n, bool ok) {
    if (ok) return;
    where.field = field(n).spec->name;
    throw InputError(where, fmt::format("required field not found (attribute {}); fields present: {}",
                                        n.name(), fieldList(defn)));
  };
  require("reach_id", hasField("reach_id"));
  require("slope", derive_attributes_ || usable("slope") || (hasField("up_elevation") && hasField("down_elevation")));
  require("manning_n", derive_attributes_ || usable("manning_n"));
  require("bottom_width", derive_attributes_ || usable("bottom_width") || usable("shape"));
}

ReachAttributes::Value ReachAttributes::text(const OGRFeature& f,
                                             FieldKey canonical) const {
  Value v;
  const Field& fld = field(canonical);
  const int idx = fld.index;
  if (idx >= 0 && f.IsFieldSetAndNotNull(idx)) {
    const OGRFieldType type = f.GetFieldDefnRef(idx)->GetType();
    if (type == OFTInteger || type == OFTInteger64) {
      v.text = std::to_string(f.GetFieldAsInteger64(idx));
    } else if (type == OFTReal) {
      const double d = f.GetFieldAsDouble(idx);
      // Integer ids stored in a real field (common in shapefiles) read as integers.
      v.text = std::isfinite(d) && d == std::trunc(d) && std::abs(d) < 9e15
                   ? std::to_string(static_cast<std::int64_t>(d))
                   : fmt::format("{}", d);
    } else {
      v.text = trim(f.GetFieldAsString(idx));
    }
    if (!v.text.empty()) v.state = Value::State::Ok;
    return v;
  }
  if (const auto& d = fld.spec->default_text) {
    v.text = *d;
    v.state = Value::State::Ok;
  }
  return v;
}

ReachAttributes::Value ReachAttributes::number(const OGRFeature& f, FieldKey canonical,
                                               double scale, const ReachRecord& r,
                                               ProblemList& problems) const {
  Value v;
  const Field& fld = field(canonical);
  const int idx = fld.index;
  const FieldSpec& spec = *fld.spec;
  if (idx < 0 || !f.IsFieldSetAndNotNull(idx)) {
    if (spec.default_number) {
      v.number = *spec.default_number * scale;
      v.state = Value::State::Ok;
    }
    return v;
  }
  const OGRFieldType type = f.GetFieldDefnRef(idx)->GetType();
  double d = 0;
  bool ok = true;
  if (type == OFTInteger || type == OFTInteger64 || type == OFTReal) {
    d = f.GetFieldAsDouble(idx);
  } else if (type == OFTString) {
    const std::string s = f.GetFieldAsString(idx);
    if (trim(s).empty()) return v;  // an empty text cell counts as missing
    ok = parseNumber(s, d);
  } else {
    ok = false;
  }
  if (!ok || !std::isfinite(d)) {
    problems.push_back(reachProblem(
        ProblemCode::InvalidAttribute, r,
        fmt::format("field {} ({}): \"{}\" is not a finite number", spec.name, canonical.name(),
                    f.GetFieldAsString(idx))));
    v.state = Value::State::Invalid;
    return v;
  }
  v.number = d * scale;
  v.state = Value::State::Ok;
  return v;
}

bool ReachAttributes::read(const OGRFeature& f, ReachRecord& r, ProblemList& problems) const {
  const Value id = text(f, "reach_id");
  if (id.state != Value::State::Ok) {
    problems.push_back(reachProblem(ProblemCode::MissingAttribute, r,
                                     fmt::format("field {} (reach_id) is empty; feature skipped",
                                                 field("reach_id").spec->name)));
    return false;
  }
  r.id = id.text;
  if (hasField("to_reach")) {
    const Value to = text(f, "to_reach");
    if (to.state == Value::State::Ok) r.to_reach = to.text;
  }
  if (hasField("lake_id") || field("lake_id").spec->default_text) {
    const Value lake = text(f, "lake_id");
    if (lake.state == Value::State::Ok) r.lake_id = lake.text;
  }
  readLength(f, r, problems);
  readSection(f, r, problems);
  readSlope(f, r, problems);
  readRouting(f, r, problems);
  return true;
}

void ReachAttributes::readLength(const OGRFeature& f, ReachRecord& r,
                                 ProblemList& problems) const {
  r.up_elevation_m = number(f, "up_elevation", length_scale_, r, problems).number;
  r.down_elevation_m = number(f, "down_elevation", length_scale_, r, problems).number;
  const Value len = number(f, "length", length_scale_, r, problems);
  if (len.state == Value::State::Invalid) return;
  if (len.state == Value::State::Missing) {
    r.length_m = r.geometry_length_m;
    return;
  }
  if (!(len.number > 0)) {
    problems.push_back(reachProblem(ProblemCode::InvalidAttribute, r,
                                     fmt::format("field {} (length) must be > 0, got {}",
                                                 field("length").spec->name, len.number)));
    return;
  }
  r.length_m = len.number;
  const double g = r.geometry_length_m;
  if (g > 0 && std::abs(len.number - g) > 0.1 * g)
    problems.push_back(reachProblem(
        ProblemCode::LengthMismatch, r,
        fmt::format("length field says {:.1f} m but the line measures {:.1f} m", len.number, g)));
}

ReachAttributes::Value ReachAttributes::derivable(const OGRFeature& f, FieldKey canonical,
                                                  double scale, const ReachRecord& r,
                                                  ProblemList& problems) const {
  Value v = number(f, canonical, scale, r, problems);
  if (derive_attributes_ && v.state == Value::State::Ok) {
    // The config's default is left to the caller, who derives a better value.
    const int idx = field(canonical).index;
    if (idx < 0 || !f.IsFieldSetAndNotNull(idx)) v = Value{};
  }
  return v;
}

void ReachAttributes::readSlope(const OGRFeature& f, ReachRecord& r,
                                ProblemList& problems) const {
  const Value s = derivable(f, "slope", 1.0, r, problems);
  double slope = s.number;
  if (s.state == Value::State::Invalid) return;
  if (s.state == Value::State::Missing) {
    // Bed slope from the end elevations when no slope is given.
    const double drop = r.up_elevation_m - r.down_elevation_m;
    if (std::isfinite(drop) && r.length_m > 0) slope = drop / r.length_m;
  }
  r.section.bed_slope = slope;
  if (std::isnan(slope) && !derive_attributes_)
    problems.push_back(reachProblem(ProblemCode::MissingAttribute, r,
                                    "no bed slope (slope field empty and no elevations)"));
}

namespace {

void requireValue(double v, const char* what, const ReachRecord& r, ProblemList& problems) {
  if (!std::isnan(v)) return;
  problems.push_back(reachProblem(ProblemCode::MissingAttribute, r,
                                   fmt::format("{} is required and not given", what)));
}

}  // namespace

void ReachAttributes::readSection(const OGRFeature& f, ReachRecord& r,
                                  ProblemList& problems) const {
  auto& sec = r.section;
  const Value shape = text(f, "shape");
  const std::string name = lower(shape.text);
  if (shape.state != Value::State::Ok || name == "trapezoid" || name == "rectangle") {
    sec.shape = Shape::Trapezoid;
  } else if (name == "circle") {
    sec.shape = Shape::Circle;
  } else {
    problems.push_back(reachProblem(
        ProblemCode::InvalidAttribute, r,
        fmt::format("field {} (shape): \"{}\" is not trapezoid or circle",
                    field("shape").spec->name, shape.text)));
  }
  sec.manning_n = derivable(f, "manning_n", 1.0, r, problems).number;
  if (!derive_attributes_) requireValue(sec.manning_n, "manning_n", r, problems);
  if (sec.shape == Shape::Circle) {
    sec.diameter_m = number(f, "diameter", length_scale_, r, problems).number;
    requireValue(sec.diameter_m, "diameter (shape circle)", r, problems);
    return;
  }
  sec.bottom_width_m = derivable(f, "bottom_width", length_scale_, r, problems).number;
  const double z = derivable(f, "side_slope", 1.0, r, problems).number;
  sec.side_slope = std::isnan(z) ? 0.0 : z;  // none given: vertical banks
  if (!derive_attributes_) requireValue(sec.bottom_width_m, "bottom_width", r, problems);
  readTwoStage(f, r, problems);
}

void ReachAttributes::readTwoStage(const OGRFeature& f, ReachRecord& r,
                                   ProblemList& problems) const {
  auto& sec = r.section;
  const double yb = number(f, "bank_depth", length_scale_, r, problems).number;
  const double wf = number(f, "floodplain_width", length_scale_, r, problems).number;
  if (std::isnan(yb) && std::isnan(wf)) return;
  if (std::isnan(yb) != std::isnan(wf)) {
    problems.push_back(reachProblem(ProblemCode::MissingAttribute, r,
                                     "a two-stage section needs both bank_depth and "
                                     "floodplain_width"));
    return;
  }
  sec.shape = Shape::TwoStage;
  sec.bank_depth_m = yb;
  sec.floodplain_width_m = wf;
  sec.floodplain_n = number(f, "floodplain_n", 1.0, r, problems).number;
  requireValue(sec.floodplain_n, "floodplain_n (two-stage section)", r, problems);
}

void ReachAttributes::readRouting(const OGRFeature& f, ReachRecord& r,
                                  ProblemList& problems) const {
  r.muskingum_k_h = number(f, "muskingum_k_h", 1.0, r, problems).number;
  r.muskingum_x = number(f, "muskingum_x", 1.0, r, problems).number;
  r.split = number(f, "split", 1.0, r, problems).number;
  r.base_flow_m3s = number(f, "base_flow", discharge_scale_, r, problems).number;
}

}  // namespace reachwise::io::detail
