#include "reachwise/io/ForcingNetcdf.hpp"

#include <netcdf.h>

#include <algorithm>
#include <atomic>
#include <cmath>
#include <set>

#include <fmt/format.h>

#include "NetcdfSeriesFile.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/hydraulics/Units.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace reachwise::io {
namespace {

std::vector<detail::SeriesVariable> forcingVariables(bool inflow, bool lateral) {
  std::vector<detail::SeriesVariable> vars;
  if (inflow) vars.push_back({"inflow", "m3 s-1", "discharge entering at the top of the reach", ""});
  if (lateral) vars.push_back({"lateral", "m3 s-1", "discharge entering along the reach", ""});
  return vars;
}

}  // namespace

NetcdfForcingWriter::NetcdfForcingWriter(std::filesystem::path path, const routing::TimeAxis& axis,
                                         std::vector<std::string> reach_ids, bool with_inflow,
                                         bool with_lateral, const ForcingNetcdfOptions& options) {
  if (!with_inflow && !with_lateral)
    throw InvalidParameter("forcing", "neither inflow nor lateral to write");
  if (with_inflow) inflow_var_ = 0;
  if (with_lateral) lateral_var_ = with_inflow ? 1 : 0;
  detail::SeriesFileOptions file_options;
  file_options.title = options.title;
  file_options.source = options.source;
  file_options.history = options.history;
  file_options.deflate_level = options.deflate_level;
  file_options.single_precision = options.single_precision;
  file_ = std::make_unique<detail::SeriesFile>(std::move(path), axis, reach_ids,
                                               forcingVariables(with_inflow, with_lateral), file_options);
}

NetcdfForcingWriter::~NetcdfForcingWriter() = default;

void NetcdfForcingWriter::write(ForcingKind kind, std::size_t reach, std::span<const double> values) {
  const int var = kind == ForcingKind::Inflow ? inflow_var_ : lateral_var_;
  if (var < 0)
    throw InternalError(fmt::format("{} was not declared for {}", kindName(kind), file_->path().string()));
  for (double q : values)
    if (!std::isfinite(q) || q < 0)
      throw InvalidParameter(std::string(kindName(kind)),
                             fmt::format("discharge {} is not finite and >= 0", q));
  file_->write(static_cast<std::size_t>(var), reach, values);
}

void NetcdfForcingWriter::finish(OutputCommit* into) { file_->finish(into); }

void writeForcingNetcdf(const std::filesystem::path& path, const Forcing& forcing,
                        const ForcingNetcdfOptions& options) {
  std::set<std::string> all;
  for (const auto& entry : forcing.inflow) all.insert(entry.first);
  for (const auto& entry : forcing.lateral) all.insert(entry.first);
  const std::vector<std::string> ids(all.begin(), all.end());
  NetcdfForcingWriter writer(path, forcing.axis, ids, !forcing.inflow.empty(),
                             !forcing.lateral.empty(), options);
  for (std::size_t r = 0; r < ids.size(); ++r) {
    for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
      const auto it = forcing.series(kind).find(ids[r]);
      if (it != forcing.series(kind).end()) writer.write(kind, r, it->second);
    }
  }
  writer.finish();
}

// ---- reading ----

namespace {

std::string lower(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return s;
}

std::string trim(std::string s) {
  const auto not_blank = [](unsigned char c) { return !std::isspace(c) && c != '\0'; };
  s.erase(std::find_if(s.rbegin(), s.rend(), not_blank).base(), s.end());
  s.erase(s.begin(), std::find_if(s.begin(), s.end(), not_blank));
  return s;
}

/// A text attribute, or nullopt when absent.
std::optional<std::string> textAttribute(int ncid, int varid, const char* name) {
  nc_type type = NC_NAT;
  std::size_t len = 0;
  if (nc_inq_att(ncid, varid, name, &type, &len) != NC_NOERR) return std::nullopt;
  if (type == NC_STRING) {
    char* value = nullptr;
    if (len != 1 || nc_get_att_string(ncid, varid, name, &value) != NC_NOERR) return std::nullopt;
    std::string out = value ? value : "";
    nc_free_string(1, &value);
    return out;
  }
  if (type != NC_CHAR) return std::nullopt;
  std::string out(len, '\0');
  if (nc_get_att_text(ncid, varid, name, out.data()) != NC_NOERR) return std::nullopt;
  return trim(out);
}

std::optional<double> numberAttribute(int ncid, int varid, const char* name) {
  double value = 0;
  std::size_t len = 0;
  if (nc_inq_attlen(ncid, varid, name, &len) != NC_NOERR || len != 1) return std::nullopt;
  if (nc_get_att_double(ncid, varid, name, &value) != NC_NOERR) return std::nullopt;
  return value;
}

InputLocation located(const std::filesystem::path& file, std::string field) {
  InputLocation where;
  where.file = file.string();
  where.field = std::move(field);
  return where;
}

/// Seconds per unit and the reference instant of "<unit> since <ISO time>".
std::pair<double, double> parseTimeUnits(const std::string& units, const std::filesystem::path& file) {
  const std::string text = lower(units);
  const std::size_t since = text.find(" since ");
  const InputLocation where = located(file, "time");
  if (since == std::string::npos)
    throw InputError(where, fmt::format("units '{}' are not '<unit> since <date-time>'", units));
  const std::string unit = trim(text.substr(0, since));
  double factor = 0;
  if (unit == "seconds" || unit == "second" || unit == "s" || unit == "sec" || unit == "secs") factor = 1;
  else if (unit == "minutes" || unit == "minute" || unit == "min" || unit == "mins") factor = 60;
  else if (unit == "hours" || unit == "hour" || unit == "h" || unit == "hr" || unit == "hrs") factor = 3600;
  else if (unit == "days" || unit == "day" || unit == "d") factor = 86400;
  else throw InputError(where, fmt::format("time unit '{}' is not seconds, minutes, hours or days", unit));
  std::string reference = trim(units.substr(since + 7));
  if (reference.size() == 10) reference += "T00:00:00";  // a date alone means its midnight (UTC)
  try {
    return {factor, parseIsoTime(reference).seconds()};
  } catch (const InvalidParameter& e) {
    throw InputError(where, fmt::format("reference time in units '{}': {}", units, e.what()));
  }
}

/// m^3/s per unit of a discharge variable.
double dischargeFactor(const std::optional<std::string>& units, const std::filesystem::path& file,
                       const std::string& name) {
  const InputLocation where = located(file, name);
  if (!units) throw InputError(where, "the variable has no units attribute (expected \"m3 s-1\")");
  std::string u = lower(*units);
  u.erase(std::remove(u.begin(), u.end(), '^'), u.end());
  if (u == "m3 s-1" || u == "m3/s" || u == "m3.s-1" || u == "m3s-1") return 1.0;
  if (u == "ft3 s-1" || u == "ft3/s" || u == "ft3.s-1" || u == "cfs") return units::cfsToM3s(1.0);
  throw InputError(where, fmt::format("units '{}' are not a discharge (expected \"m3 s-1\")", *units));
}


/// Most times, and values, an observations file may hold (1e8 times is
/// three millennia at one a second; 5e8 values take 4 GB).
constexpr std::size_t kMaxObservedTimes = 100'000'000;
constexpr std::size_t kMaxObservedValues = 500'000'000;

/// Largest text of station ids read from one variable, bytes (1 GiB): far
/// beyond any network, small enough to allocate.
constexpr std::size_t kMaxIdBytes = std::size_t{1} << 30;

/// The dimension ids of variable `var` and their lengths.
struct Shape {
  nc_type type = NC_NAT;
  std::vector<int> dims;
  std::vector<std::size_t> lengths;
};

Shape shapeOf(int ncid, int var, const std::filesystem::path& path, const std::string& name) {
  Shape shape;
  int ndims = 0;
  detail::check(nc_inq_var(ncid, var, nullptr, &shape.type, &ndims, nullptr, nullptr), path, "inspecting '" + name + "'");
  shape.dims.resize(static_cast<std::size_t>(ndims));
  shape.lengths.resize(shape.dims.size());
  if (ndims > 0) detail::check(nc_inq_vardimid(ncid, var, shape.dims.data()), path, "inspecting '" + name + "'");
  for (std::size_t d = 0; d < shape.dims.size(); ++d)
    detail::check(nc_inq_dimlen(ncid, shape.dims[d], &shape.lengths[d]), path, "inspecting '" + name + "'");
  return shape;
}

/// The ids along dimension `dim_name` held by `var_name` (NC_STRING on
/// that dimension, or a 2-D char array whose first dimension it is),
/// trimmed; a variable of another shape, an empty or a repeated id is an
/// InputError naming it. Buffers are sized from the variable's own shape.
std::vector<std::string> stationIds(int ncid, const std::filesystem::path& path, const std::string& dim_name,
                                    const std::string& var_name) {
  int dim = 0, var = 0;
  std::vector<std::string> ids;
  detail::check(nc_inq_dimid(ncid, dim_name.c_str(), &dim), path, "finding dimension '" + dim_name + "'");
  detail::check(nc_inq_varid(ncid, var_name.c_str(), &var), path, "finding variable '" + var_name + "'");
  const Shape shape = shapeOf(ncid, var, path, var_name);
  const InputLocation where = located(path, var_name);
  const bool strings = shape.type == NC_STRING && shape.dims.size() == 1;
  const bool chars = shape.type == NC_CHAR && shape.dims.size() == 2;
  if (!strings && !chars)
    throw InputError(where, "'" + var_name + "' must be strings (NC_STRING) on '" + dim_name +
                                "' or a char array on ('" + dim_name + "', <id length>)");
  if (shape.dims[0] != dim || (chars && shape.dims[1] == dim))
    throw InputError(where, "'" + var_name + "' does not run along the dimension '" + dim_name + "'");
  const std::size_t n = shape.lengths[0];
  if (strings) {
    if (n > kMaxIdBytes / sizeof(char*))
      throw InputError(where, fmt::format("{} ids are more than this program reads", n));
    std::vector<char*> raw(n, nullptr);
    if (n > 0) detail::check(nc_get_var_string(ncid, var, raw.data()), path, "reading '" + var_name + "'");
    for (char* s : raw) ids.push_back(trim(s ? s : ""));
    if (n > 0) nc_free_string(n, raw.data());
  } else {
    const std::size_t len = shape.lengths[1];
    if (len > 0 && n > kMaxIdBytes / len)
      throw InputError(where, fmt::format("{} ids of {} characters are more than this program reads", n, len));
    std::string raw(n * len, '\0');
    if (!raw.empty()) detail::check(nc_get_var_text(ncid, var, raw.data()), path, "reading '" + var_name + "'");
    for (std::size_t r = 0; r < n; ++r) ids.push_back(trim(raw.substr(r * len, len)));
  }
  std::set<std::string> seen;
  for (std::size_t r = 0; r < n; ++r) {
    InputLocation at = where;
    (dim_name == "gauge" ? at.gauge_id : at.reach_id) = ids[r];
    if (ids[r].empty()) throw InputError(at, fmt::format("{} index {} has an empty id", dim_name, r));
    if (!seen.insert(ids[r]).second) throw InputError(at, fmt::format("the {} id appears twice", dim_name));
  }
  return ids;
}

/// The times of the `time` coordinate, s since the epoch: `time` must be a
/// numeric variable on the dimension `time` (its length from the variable,
/// at most `max_steps`), its units "<unit> since <date-time>", its
/// calendar standard, without packing attributes; every time finite and
/// within the years TimeAxis allows. InputError naming the file and `time`
/// otherwise.
struct TimeCoordinate {
  std::vector<double> seconds;
  std::vector<double> offsets;   ///< seconds after the reference time (steps are taken from these: exact)
  int time_dim = -1;
  int time_var = -1;
};

TimeCoordinate readTimes(int ncid, const std::filesystem::path& path, std::size_t max_steps, bool forcing) {
  TimeCoordinate out;
  const InputLocation where = located(path, "time");
  detail::check(nc_inq_dimid(ncid, "time", &out.time_dim), path, "finding dimension 'time'");
  detail::check(nc_inq_varid(ncid, "time", &out.time_var), path, "finding variable 'time'");
  const Shape shape = shapeOf(ncid, out.time_var, path, "time");
  if (shape.dims.size() != 1 || shape.dims[0] != out.time_dim)
    throw InputError(where, "'time' must be one-dimensional, on the dimension 'time'");
  if (shape.type == NC_CHAR || shape.type == NC_STRING)
    throw InputError(where, "'time' must be numbers (offsets from the reference time of its units)");
  const std::size_t steps = shape.lengths[0];
  if (steps > max_steps)
    throw InputError(where, fmt::format("{} times, more than the {} allowed{}", steps, max_steps,
                                        forcing ? "; " + maxStepsAdvice(static_cast<double>(steps)) : ""));
  for (const char* packing : {"scale_factor", "add_offset"}) {
    std::size_t len = 0;
    if (nc_inq_attlen(ncid, out.time_var, packing, &len) == NC_NOERR)
      throw InputError(where, fmt::format("'time' has a {} attribute; store the times unpacked", packing));
  }
  const auto units = textAttribute(ncid, out.time_var, "units");
  if (!units) throw InputError(where, "'time' has no units attribute");
  const auto [factor, reference] = parseTimeUnits(*units, path);
  if (const auto calendar = textAttribute(ncid, out.time_var, "calendar")) {
    const std::string c = lower(*calendar);
    if (c != "standard" && c != "gregorian" && c != "proleptic_gregorian")
      throw InputError(where, fmt::format("calendar '{}' is not supported (use \"standard\")", *calendar));
  }
  std::vector<double> raw(steps);
  if (steps > 0) detail::check(nc_get_var_double(ncid, out.time_var, raw.data()), path, "reading 'time'");
  out.seconds.resize(steps);
  out.offsets.resize(steps);
  for (std::size_t k = 0; k < steps; ++k) {
    const double t = reference + raw[k] * factor;
    try {
      if (!std::isfinite(raw[k])) throw InvalidParameter("time", fmt::format("{} is not a finite number", raw[k]));
      routing::TimeAxis::requireInRange("time", t);
    } catch (const InvalidParameter& e) {
      throw InputError(where, fmt::format("time index {} ({} in units '{}'): {}", k, raw[k], *units,
                                          std::string(e.what()).substr(6)));  // past "time: "
    }
    out.seconds[k] = t;
    out.offsets[k] = raw[k] * factor;
  }
  return out;
}

}  // namespace

namespace {
/// Bytes of forcing the process holds read whole (kWholeReadMaxBytes).
std::atomic<std::size_t> whole_read_bytes{0};
}  // namespace

NetcdfForcingSource::NetcdfForcingSource(std::filesystem::path path, std::size_t max_steps)
    : path_(std::move(path)), max_steps_(max_steps) {
  const std::lock_guard lock(detail::netcdfMutex());
  detail::check(detail::openForReading(path_, &ncid_), path_, "opening the file");
  try {
    readAxis();
    readIds();
    openVariable(ForcingKind::Inflow);
    openVariable(ForcingKind::Lateral);
    if (vars_[0].varid < 0 && vars_[1].varid < 0)
      throw InputError(located(path_, ""), "the file has neither an 'inflow' nor a 'lateral' variable");
  } catch (...) {
    nc_close(ncid_);
    ncid_ = -1;
    throw;
  }
}

NetcdfForcingSource::~NetcdfForcingSource() {
  for (const Variable& v : vars_) whole_read_bytes -= v.bytes;
  if (ncid_ < 0) return;
  const std::lock_guard lock(detail::netcdfMutex());
  nc_close(ncid_);
}

void NetcdfForcingSource::readAxis() {
  const InputLocation where = located(path_, "time");
  const TimeCoordinate times = readTimes(ncid_, path_, max_steps_, true);
  const std::vector<double>& t = times.seconds;
  const std::size_t steps = t.size();
  if (steps < 2) throw InputError(where, fmt::format("{} time step(s); at least 2 are needed", steps));
  const std::vector<double>& rel = times.offsets;
  const double dt = rel[1] - rel[0];
  if (!(dt > 0)) throw InputError(where, "times do not increase");
  // Sub-millisecond slack for times stored as fractional hours or days
  // (and a thousandth of the step for steps shorter than a second).
  const double tolerance_s = std::min(1e-3, 1e-3 * dt);
  for (std::size_t k = 1; k < steps; ++k) {
    if (std::abs(rel[k] - rel[k - 1] - dt) > tolerance_s) {
      InputLocation at = where;
      at.time = formatIsoTime(t[k], 0, 3);
      throw InputError(at, fmt::format("the step before it is {} s where the first is {} s; "
                                       "forcing must be on one uniform step",
                                       rel[k] - rel[k - 1], dt));
    }
  }
  const double start = std::round(t[0]);
  if (std::abs(start - t[0]) > 1e-3)
    throw InputError(where, "the first time is not on a whole second");
  // A step within a millisecond of a whole number of seconds is that number.
  const double whole = std::round(dt);
  const double step = whole >= 1 && std::abs(dt - whole) <= 1e-3 ? whole : dt;
  const double offset = numberAttribute(ncid_, times.time_var, "utc_offset_minutes").value_or(0.0);
  try {
    routing::TimeAxis::requireUtcOffset(offset);
    axis_ = routing::TimeAxis::make(static_cast<std::int64_t>(start), step, steps, static_cast<int>(offset));
  } catch (const InvalidParameter& e) {
    throw InputError(where, e.what());
  }
}

void NetcdfForcingSource::readIds() {
  ids_ = stationIds(ncid_, path_, "reach", "reach_id");
  for (std::size_t r = 0; r < ids_.size(); ++r) index_.emplace(ids_[r], r);
}

void NetcdfForcingSource::openVariable(ForcingKind kind) {
  Variable& v = vars_[kind == ForcingKind::Inflow ? 0 : 1];
  const std::string name(kindName(kind));
  if (nc_inq_varid(ncid_, name.c_str(), &v.varid) != NC_NOERR) {
    v.varid = -1;
    return;
  }
  const InputLocation where = located(path_, name);
  int ndims = 0, dims[NC_MAX_VAR_DIMS] = {};
  int time_dim = 0, reach_dim = 0;
  nc_type type = NC_NAT;
  detail::check(nc_inq_var(ncid_, v.varid, nullptr, &type, &ndims, dims, nullptr), path_,
                "inspecting " + name);
  nc_inq_dimid(ncid_, "time", &time_dim);
  nc_inq_dimid(ncid_, "reach", &reach_dim);
  if (ndims != 2 || !((dims[0] == time_dim && dims[1] == reach_dim) ||
                      (dims[0] == reach_dim && dims[1] == time_dim)))
    throw InputError(where, "the variable must have dimensions (time, reach)");
  if (type != NC_DOUBLE && type != NC_FLOAT)
    throw InputError(where, "the variable must be float or double");
  v.time_first = dims[0] == time_dim;
  const double to_m3s = dischargeFactor(textAttribute(ncid_, v.varid, "units"), path_, name);
  v.fill = numberAttribute(ncid_, v.varid, "_FillValue")
               .value_or(type == NC_DOUBLE ? NC_FILL_DOUBLE : static_cast<double>(NC_FILL_FLOAT));
  v.scale = numberAttribute(ncid_, v.varid, "scale_factor").value_or(1.0) * to_m3s;
  v.offset = numberAttribute(ncid_, v.varid, "add_offset").value_or(0.0) * to_m3s;

  // What one reach's read would decompress or step over, in values.
  const double steps = static_cast<double>(axis_.steps), reaches = static_cast<double>(ids_.size());
  int storage = NC_CONTIGUOUS;
  std::size_t chunks[2] = {0, 0};
  detail::check(nc_inq_var_chunking(ncid_, v.varid, &storage, chunks), path_, "inspecting " + name);
  double per_reach = v.time_first ? steps * reaches : steps;  // contiguous: one row of the file apart
  if (storage == NC_CHUNKED) {
    const double ct = static_cast<double>(chunks[v.time_first ? 0 : 1]);
    const double cr = static_cast<double>(chunks[v.time_first ? 1 : 0]);
    per_reach = std::ceil(steps / ct) * ct * cr;
  }
  v.whole = ids_.size() > 1 && per_reach > kWholeReadFactor * steps;
  v.is_float = type == NC_FLOAT;
  v.outer_chunk = storage == NC_CHUNKED ? std::max<std::size_t>(1, chunks[0]) : 1;
}

void NetcdfForcingSource::readVariableWhole(ForcingKind kind, Variable& v) const {
  const std::size_t steps = axis_.steps, reaches = ids_.size();
  const std::size_t elem = v.is_float ? sizeof(float) : sizeof(double);
  const std::size_t bytes = steps * reaches * elem;
  std::size_t held = whole_read_bytes.load();
  do {
    if (held + bytes > kWholeReadMaxBytes) return;  // over budget: reach by reach
  } while (!whole_read_bytes.compare_exchange_weak(held, held + bytes));
  try {
    // Blocks of whole rows of the variable in the order they lie in the
    // file (chunk rows when chunked), about 64 MiB each; (time, reach)
    // blocks are turned round into [reach][time], (reach, time) ones go
    // straight there.
    const std::size_t outer = v.time_first ? steps : reaches, inner = v.time_first ? reaches : steps;
    const std::size_t unit = v.outer_chunk;
    const std::size_t block = unit * std::max<std::size_t>(1, (std::size_t{64} << 20) / (unit * inner * elem));
    const std::string what = fmt::format("reading {} in file order", kindName(kind));
    std::vector<float> whole_float, buf_float;
    std::vector<double> whole_double, buf_double;
    if (v.is_float) whole_float.resize(steps * reaches);
    else whole_double.resize(steps * reaches);
    const std::lock_guard lock(detail::netcdfMutex());
    for (std::size_t o0 = 0; o0 < outer; o0 += block) {
      const std::size_t rows = std::min(block, outer - o0);
      const std::size_t start[2] = {o0, 0}, count[2] = {rows, inner};
      const auto read = [&](auto& whole, auto& buf, auto get) {
        if (!v.time_first) {  // (reach, time): already reach by reach
          detail::check(get(ncid_, v.varid, start, count, whole.data() + o0 * steps), path_, what);
          return;
        }
        buf.resize(rows * reaches);
        detail::check(get(ncid_, v.varid, start, count, buf.data()), path_, what);
        for (std::size_t t = 0; t < rows; ++t)
          for (std::size_t r = 0; r < reaches; ++r) whole[r * steps + o0 + t] = buf[t * reaches + r];
      };
      if (v.is_float) read(whole_float, buf_float, nc_get_vara_float);
      else read(whole_double, buf_double, nc_get_vara_double);
    }
    v.whole_float = std::move(whole_float);
    v.whole_double = std::move(whole_double);
    v.bytes = bytes;
  } catch (...) {
    whole_read_bytes -= bytes;
    throw;
  }
}

bool NetcdfForcingSource::readWhole(ForcingKind kind) const {
  const Variable& v = vars_[kind == ForcingKind::Inflow ? 0 : 1];
  return !v.whole_float.empty() || !v.whole_double.empty();
}

bool NetcdfForcingSource::has(ForcingKind kind, std::string_view id) const {
  return vars_[kind == ForcingKind::Inflow ? 0 : 1].varid >= 0 && index_.contains(id);
}

std::vector<std::string> NetcdfForcingSource::ids(ForcingKind kind) const {
  if (vars_[kind == ForcingKind::Inflow ? 0 : 1].varid < 0) return {};
  std::vector<std::string> out = ids_;
  std::sort(out.begin(), out.end());
  return out;
}

void NetcdfForcingSource::visitIds(ForcingKind kind, const std::function<void(std::string_view)>& visit) const {
  if (vars_[kind == ForcingKind::Inflow ? 0 : 1].varid < 0) return;
  for (const std::string& id : ids_) visit(id);
}

bool NetcdfForcingSource::readsOnDemand(ForcingKind kind) const {
  return vars_[kind == ForcingKind::Inflow ? 0 : 1].varid >= 0;
}

bool NetcdfForcingSource::fill(ForcingKind kind, std::string_view id, std::span<double> out) const {
  REACHWISE_ASSERT(out.size() == axis_.steps);
  const auto none = [&] {
    std::fill(out.begin(), out.end(), 0.0);
    return false;
  };
  Variable& v = vars_[kind == ForcingKind::Inflow ? 0 : 1];
  if (v.varid < 0) return none();
  const auto it = index_.find(id);
  if (it == index_.end()) return none();
  if (v.whole) std::call_once(v.once, [&] { readVariableWhole(kind, v); });
  const auto copy = [&](const auto& whole) {
    const auto from = whole.begin() + static_cast<std::ptrdiff_t>(it->second * axis_.steps);
    std::copy(from, from + static_cast<std::ptrdiff_t>(axis_.steps), out.begin());
  };
  if (!v.whole_float.empty()) {
    copy(v.whole_float);
  } else if (!v.whole_double.empty()) {
    copy(v.whole_double);
  } else {
    const std::size_t r = it->second;
    const std::size_t start[2] = {v.time_first ? 0 : r, v.time_first ? r : 0};
    const std::size_t count[2] = {v.time_first ? axis_.steps : 1, v.time_first ? 1 : axis_.steps};
    const std::lock_guard lock(detail::netcdfMutex());
    detail::check(nc_get_vara_double(ncid_, v.varid, start, count, out.data()), path_,
                  fmt::format("reading {} of reach {}", kindName(kind), id));
  }
  const auto missing = [&](double x) { return std::isnan(x) || x == v.fill; };
  if (std::all_of(out.begin(), out.end(), missing)) return none();
  for (std::size_t k = 0; k < out.size(); ++k) {
    const double raw = out[k];
    const double q = raw * v.scale + v.offset;
    out[k] = readableDischarge(q);
    if (missing(raw) || std::isnan(out[k])) {
      InputLocation where = located(path_, std::string(kindName(kind)));
      where.reach_id = std::string(id);
      where.time = formatIsoTime(axis_.at(static_cast<double>(k)), axis_.utc_offset_min, 0);
      throw InputError(where, missing(raw) ? std::string("missing value (_FillValue) inside the series")
                                           : dischargeProblem(q));
    }
  }
  return true;
}

RawForcing readObservedNetcdf(const std::filesystem::path& path) {
  const std::lock_guard lock(detail::netcdfMutex());
  int ncid = -1;
  detail::check(detail::openForReading(path, &ncid), path, "opening the file");
  struct Closer {
    int id;
    ~Closer() { nc_close(id); }
  } closer{ncid};

  // Times: any increasing instants (observations need no uniform step).
  const TimeCoordinate times = readTimes(ncid, path, kMaxObservedTimes, false);
  const std::vector<double>& t = times.seconds;
  const std::size_t steps = t.size();
  const int time_dim = times.time_dim, time_var = times.time_var;
  const InputLocation at_time = located(path, "time");
  for (std::size_t k = 1; k < steps; ++k) {
    if (!(t[k] > t[k - 1])) {
      InputLocation at = at_time;
      at.time = formatIsoTime(t[k], 0, 3);
      throw InputError(at, fmt::format("time index {} does not come after the one before", k));
    }
  }

  // Stations: gauges (`gauge`, `gauge_id`) when the file has them, else reaches.
  int probe = 0;
  const bool gauges = nc_inq_dimid(ncid, "gauge", &probe) == NC_NOERR && nc_inq_varid(ncid, "gauge_id", &probe) == NC_NOERR;
  const std::string dim_name = gauges ? "gauge" : "reach";
  const std::vector<std::string> ids = stationIds(ncid, path, dim_name, dim_name + "_id");
  int station_dim = 0;
  nc_inq_dimid(ncid, dim_name.c_str(), &station_dim);

  // The values: `discharge` on (time, station) or (station, time).
  const std::string name = kObservedNetcdfVariable;
  const InputLocation where = located(path, name);
  int var = 0, ndims = 0, dims[NC_MAX_VAR_DIMS] = {};
  nc_type type = NC_NAT;
  if (nc_inq_varid(ncid, name.c_str(), &var) != NC_NOERR)
    throw InputError(where, fmt::format("the file has no '{}' variable (observed discharge on (time, {}))", name,
                                        dim_name));
  detail::check(nc_inq_var(ncid, var, nullptr, &type, &ndims, dims, nullptr), path, "inspecting " + name);
  if (ndims != 2 || !((dims[0] == time_dim && dims[1] == station_dim) ||
                      (dims[0] == station_dim && dims[1] == time_dim)))
    throw InputError(where, fmt::format("the variable must have dimensions (time, {})", dim_name));
  if (type != NC_DOUBLE && type != NC_FLOAT) throw InputError(where, "the variable must be float or double");
  const bool time_first = dims[0] == time_dim;
  const double to_m3s = dischargeFactor(textAttribute(ncid, var, "units"), path, name);
  const double fill = numberAttribute(ncid, var, "_FillValue")
                          .value_or(type == NC_DOUBLE ? NC_FILL_DOUBLE : static_cast<double>(NC_FILL_FLOAT));
  const double scale = numberAttribute(ncid, var, "scale_factor").value_or(1.0) * to_m3s;
  const double offset = numberAttribute(ncid, var, "add_offset").value_or(0.0) * to_m3s;
  if (!ids.empty() && steps > kMaxObservedValues / ids.size())
    throw InputError(where, fmt::format("{} times × {} stations are more values than this program reads", steps,
                                        ids.size()));
  std::vector<double> values(steps * ids.size());
  if (!values.empty()) detail::check(nc_get_var_double(ncid, var, values.data()), path, "reading " + name);

  RawForcing raw;
  raw.file = path.string();
  const double offset_min = numberAttribute(ncid, time_var, "utc_offset_minutes").value_or(0.0);
  try {
    routing::TimeAxis::requireUtcOffset(offset_min);  // before it is made an integer
  } catch (const InvalidParameter& e) {
    throw InputError(at_time, e.what());
  }
  raw.utc_offset_min = static_cast<int>(offset_min);
  for (std::size_t r = 0; r < ids.size(); ++r) {
    RawSeries series;  // every station, also one with no value (it is reported by name)
    for (std::size_t k = 0; k < steps; ++k) {
      const double v = values[time_first ? k * ids.size() + r : r * steps + k];
      if (std::isnan(v) || v == fill) continue;  // missing: skipped, as an empty CSV cell
      const double q = readableDischarge(v * scale + offset);
      if (std::isnan(q)) {
        InputLocation at = where;
        (gauges ? at.gauge_id : at.reach_id) = ids[r];
        at.time = formatIsoTime(t[k], raw.utc_offset_min, 0);
        throw InputError(at, dischargeProblem(v * scale + offset));
      }
      series.t_s.push_back(t[k]);
      series.q_m3s.push_back(q);
      series.line.push_back(0);  // no line in a NetCDF file
    }
    raw.series.emplace(ids[r], std::move(series));
  }
  return raw;
}

Forcing readForcingNetcdf(const std::filesystem::path& path) {
  const NetcdfForcingSource source(path);
  Forcing forcing;
  forcing.axis = source.axis();
  std::vector<double> values;
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    for (const std::string& id : source.ids(kind))
      if (source.series(kind, id, values)) forcing.series(kind)[id] = values;
    if (!source.ids(kind).empty()) forcing.origin(kind) = path.string();
  }
  return forcing;
}

}  // namespace reachwise::io
