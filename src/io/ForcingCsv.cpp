#include "reachwise/io/ForcingCsv.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <fstream>
#include <limits>
#include <set>
#include <sstream>

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace reachwise::io {
namespace {

/// Times closer than this are the same instant (fractional seconds are
/// carried as doubles).
constexpr double kTimeTolerance_s = 1e-6;

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

std::string lower(std::string_view s) {
  std::string out(s);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

InputLocation at(const std::string& file, std::int64_t line) {
  InputLocation where;
  where.file = file;
  where.line = line;
  return where;
}

bool isBlank(char c) { return c == ' ' || c == '\t'; }
bool isEnd(char c) { return c == ',' || c == '\n' || c == '\r'; }

}  // namespace

std::vector<CsvRecord> parseCsvRecords(std::string_view text, const std::string& file) {
  if (text.starts_with("\xEF\xBB\xBF")) text.remove_prefix(3);
  std::vector<CsvRecord> out;
  std::int64_t line = 1;
  std::size_t i = 0;
  const std::size_t n = text.size();
  while (i < n) {
    CsvRecord record;
    record.line = line;
    for (;;) {
      std::string field;
      std::size_t j = i;
      while (j < n && isBlank(text[j])) ++j;
      if (j < n && text[j] == '"') {
        const std::int64_t opened = line;
        for (i = j + 1;; ++i) {
          if (i >= n) throw InputError(at(file, opened), "a quoted field is not closed");
          if (text[i] == '"') {
            if (i + 1 < n && text[i + 1] == '"') {
              field += '"';
              ++i;
              continue;
            }
            ++i;
            break;
          }
          if (text[i] == '\r' && i + 1 < n && text[i + 1] == '\n') continue;
          if (text[i] == '\n') ++line;
          field += text[i];
        }
        while (i < n && isBlank(text[i])) ++i;
        if (i < n && !isEnd(text[i]))
          throw InputError(at(file, line), "text after the closing quote of a field");
      } else {
        for (; i < n && !isEnd(text[i]); ++i) {
          if (text[i] == '"')
            throw InputError(at(file, line), "a quote inside an unquoted field (quote the whole field)");
          field += text[i];
        }
      }
      record.fields.push_back(std::move(field));
      if (i < n && text[i] == ',') {
        ++i;
        continue;
      }
      if (i < n && text[i] == '\r') ++i;
      if (i < n && text[i] == '\n') ++i;
      ++line;
      break;
    }
    const bool blank = record.fields.size() == 1 && trim(record.fields[0]).empty();
    if (!blank) out.push_back(std::move(record));
  }
  return out;
}

namespace {

std::string readWhole(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    InputLocation where;
    where.file = path.string();
    throw InputError(where, "cannot open the file for reading");
  }
  std::ostringstream text;
  text << in.rdbuf();
  return std::move(text).str();
}

double parseDischarge(std::string_view raw, const InputLocation& where, units::System unit) {
  std::string_view s = trim(raw);
  if (s.empty()) throw InputError(where, "the discharge is empty");
  if (s.front() == '+') s.remove_prefix(1);
  double value = 0;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), value);
  if (ec != std::errc{} || end != s.data() + s.size())
    throw InputError(where, fmt::format("'{}' is not a finite number", trim(raw)));
  if (!std::isfinite(value))
    throw InputError(where, fmt::format("discharge '{}' is not finite", trim(raw)));
  if (value < 0) throw InputError(where, fmt::format("discharge {} is negative", trim(raw)));
  return unit == units::System::USCustomary ? units::cfsToM3s(value) : value;
}

IsoTime parseTime(std::string_view raw, InputLocation where) {
  where.field = "time";
  try {
    return parseIsoTime(raw);
  } catch (const InvalidParameter& e) {
    std::string message = e.what();
    if (message.starts_with("time: ")) message.erase(0, 6);
    throw InputError(where, message);
  }
}

/// Appends one sample, refusing a time that is not after the reach's last one.
void append(RawSeries& series, double t, double q, const InputLocation& where, std::string_view what) {
  if (!series.t_s.empty() && t <= series.t_s.back() + kTimeTolerance_s) {
    const bool same = std::abs(t - series.t_s.back()) <= kTimeTolerance_s;
    throw InputError(where, fmt::format("{} {} line {}", what,
                                        same ? "repeats the time on" : "is earlier than the time on",
                                        series.line.back()));
  }
  series.t_s.push_back(t);
  series.q_m3s.push_back(q);
  series.line.push_back(where.line.value_or(0));
}

void checkFieldCount(const CsvRecord& record, std::size_t expected, const std::string& file) {
  if (record.fields.size() != expected)
    throw InputError(at(file, record.line),
                     fmt::format("{} fields where the header has {}", record.fields.size(), expected));
}

void readLong(const std::vector<CsvRecord>& records, CsvForcingFile& out, units::System unit) {
  const auto& header = records.front().fields;
  std::size_t col_id = 0, col_time = 0, col_q = 0;
  for (std::size_t c = 0; c < header.size(); ++c) {
    const std::string name = lower(trim(header[c]));
    (name == "reach_id" ? col_id : name == "time" ? col_time : col_q) = c;
  }
  for (std::size_t r = 1; r < records.size(); ++r) {
    const CsvRecord& rec = records[r];
    checkFieldCount(rec, header.size(), out.file);
    InputLocation where = at(out.file, rec.line);
    const std::string id(trim(rec.fields[col_id]));
    if (id.empty()) {
      where.field = "reach_id";
      throw InputError(where, "the reach id is empty");
    }
    where.reach_id = id;
    const IsoTime t = parseTime(rec.fields[col_time], where);
    if (out.series.empty()) out.utc_offset_min = t.utc_offset_min;
    where.time = std::string(trim(rec.fields[col_time]));
    InputLocation qwhere = where;
    qwhere.field = "discharge";
    const double q = parseDischarge(rec.fields[col_q], qwhere, unit);
    where.field = "time";
    append(out.series[id], t.seconds(), q, where, "this reach's time");
  }
}

void readWide(const std::vector<CsvRecord>& records, CsvForcingFile& out, units::System unit) {
  const CsvRecord& header = records.front();
  std::vector<std::string> ids;
  std::set<std::string, std::less<>> seen;
  for (std::size_t c = 1; c < header.fields.size(); ++c) {
    std::string id(trim(header.fields[c]));
    InputLocation where = at(out.file, header.line);
    if (id.empty()) throw InputError(where, fmt::format("column {} has no reach id in the header", c + 1));
    where.reach_id = id;
    if (!seen.insert(id).second) throw InputError(where, "the reach id appears in two columns");
    ids.push_back(std::move(id));
  }
  double previous = 0;
  std::int64_t previous_line = 0;
  for (std::size_t r = 1; r < records.size(); ++r) {
    const CsvRecord& rec = records[r];
    checkFieldCount(rec, header.fields.size(), out.file);
    InputLocation where = at(out.file, rec.line);
    const IsoTime t = parseTime(rec.fields[0], where);
    where.time = std::string(trim(rec.fields[0]));
    if (r == 1) out.utc_offset_min = t.utc_offset_min;
    if (r > 1 && t.seconds() <= previous + kTimeTolerance_s) {
      where.field = "time";
      const bool same = std::abs(t.seconds() - previous) <= kTimeTolerance_s;
      throw InputError(where, fmt::format("the time {} line {}",
                                          same ? "repeats the time on" : "is earlier than the time on",
                                          previous_line));
    }
    previous = t.seconds();
    previous_line = rec.line;
    for (std::size_t c = 1; c < rec.fields.size(); ++c) {
      if (trim(rec.fields[c]).empty()) continue;  // no sample of this reach at this time
      InputLocation qwhere = where;
      qwhere.reach_id = ids[c - 1];
      const double q = parseDischarge(rec.fields[c], qwhere, unit);
      append(out.series[ids[c - 1]], t.seconds(), q, qwhere, "the time");
    }
  }
  for (const std::string& id : ids) {
    if (out.series.contains(id)) continue;
    InputLocation where = at(out.file, header.line);
    where.reach_id = id;
    throw InputError(where, "the column has no values");
  }
}

CsvLayout detectLayout(const CsvRecord& header, const std::string& file) {
  std::multiset<std::string> names;
  for (const auto& f : header.fields) names.insert(lower(trim(f)));
  if (names == std::multiset<std::string>{"discharge", "reach_id", "time"}) return CsvLayout::Long;
  if (header.fields.size() >= 2 && lower(trim(header.fields[0])) == "time" &&
      !names.contains("reach_id"))
    return CsvLayout::Wide;
  throw InputError(at(file, header.line),
                   "the header must be 'reach_id,time,discharge' (long form) or "
                   "'time,<reach id>,<reach id>,...' (wide form)");
}

}  // namespace

CsvForcingFile readForcingCsvFile(const std::filesystem::path& path, units::System unit) {
  CsvForcingFile out;
  out.file = path.string();
  const std::vector<CsvRecord> records = parseCsvRecords(readWhole(path), out.file);
  if (records.empty()) throw InputError(at(out.file, 1), "the file is empty (expected a header line)");
  out.layout = detectLayout(records.front(), out.file);
  if (records.size() == 1)
    throw InputError(at(out.file, records.front().line + 1), "no data rows after the header");
  if (out.layout == CsvLayout::Long)
    readLong(records, out, unit);
  else
    readWide(records, out, unit);
  return out;
}

namespace {

/// The one step every reach of `file` is sampled on: the smallest spacing
/// of any two consecutive samples (so that a gap, not the regular rows, is
/// blamed); NaN when no reach has two samples. With `require`, any other
/// spacing is an InputError.
double fileStep(const CsvForcingFile& file, bool require) {
  double step = std::numeric_limits<double>::infinity();
  for (const auto& entry : file.series)
    for (std::size_t k = 1; k < entry.second.t_s.size(); ++k)
      step = std::min(step, entry.second.t_s[k] - entry.second.t_s[k - 1]);
  if (std::isinf(step)) return std::numeric_limits<double>::quiet_NaN();
  if (!require) return step;
  for (const auto& [id, s] : file.series) {
    for (std::size_t k = 1; k < s.t_s.size(); ++k) {
      const double d = s.t_s[k] - s.t_s[k - 1];
      if (std::abs(d - step) <= kTimeTolerance_s) continue;
      InputLocation where = at(file.file, s.line[k]);
      where.reach_id = id;
      where.field = "time";
      throw InputError(where, fmt::format("a step of {} s from the previous sample, where the "
                                          "file's step is {} s; give a time step to resample",
                                          d, step));
    }
  }
  return step;
}

double chooseStep(const CsvForcingFile* inflow, const CsvForcingFile* lateral,
                  const CsvForcingOptions& options) {
  if (options.dt_s) {
    if (!std::isfinite(*options.dt_s) || *options.dt_s <= 0)
      throw InvalidParameter("dt", fmt::format("{} s is not a positive time step", *options.dt_s));
    return *options.dt_s;
  }
  const double none = std::numeric_limits<double>::quiet_NaN();
  const double in = inflow ? fileStep(*inflow, true) : none;
  const double lat = lateral ? fileStep(*lateral, true) : none;
  if (!std::isnan(in) && !std::isnan(lat) && std::abs(in - lat) > kTimeTolerance_s) {
    InputLocation where;
    where.file = lateral->file;
    throw InputError(where, fmt::format("its step of {} s differs from the inflow file's {} s; "
                                        "give a time step to resample both", lat, in));
  }
  if (!std::isnan(in)) return in;
  if (!std::isnan(lat)) return lat;
  InputLocation where;
  where.file = (inflow ? inflow : lateral)->file;
  throw InputError(where, "no reach has two samples, so the time step is unknown; give one");
}

struct Span {
  double first = 0, last = 0;
};

Span dataSpan(const CsvForcingFile* inflow, const CsvForcingFile* lateral) {
  Span span{std::numeric_limits<double>::infinity(), -std::numeric_limits<double>::infinity()};
  for (const CsvForcingFile* f : {inflow, lateral}) {
    if (!f) continue;
    for (const auto& entry : f->series) {
      span.first = std::min(span.first, entry.second.t_s.front());
      span.last = std::max(span.last, entry.second.t_s.back());
    }
  }
  return span;
}

routing::TimeAxis chooseAxis(const CsvForcingFile* inflow, const CsvForcingFile* lateral,
                             const CsvForcingOptions& options) {
  const CsvForcingFile& main = inflow ? *inflow : *lateral;
  InputLocation where;
  where.file = main.file;
  routing::TimeAxis axis;
  axis.dt_s = chooseStep(inflow, lateral, options);
  axis.utc_offset_min = main.utc_offset_min;
  const Span data = dataSpan(inflow, lateral);
  const double start = options.start_unix_s ? static_cast<double>(*options.start_unix_s) : data.first;
  const double end = options.end_unix_s ? static_cast<double>(*options.end_unix_s) : data.last;
  if (start != std::floor(start))
    throw InputError(where, fmt::format("the run would start at {}, not on a whole second; give a start",
                                        formatIsoTime(start, axis.utc_offset_min, 6)));
  if (end < start)
    throw InvalidParameter("end", fmt::format("the run end {} is before its start {}",
                                              formatIsoTime(end, axis.utc_offset_min, 3),
                                              formatIsoTime(start, axis.utc_offset_min, 3)));
  const double intervals = std::round((end - start) / axis.dt_s);
  if (std::abs(end - start - intervals * axis.dt_s) > kTimeTolerance_s)
    throw InputError(where, fmt::format("the run from {} to {} ({} s) is not a whole number of "
                                        "{} s steps; choose a time step that divides it",
                                        formatIsoTime(start, axis.utc_offset_min, 3),
                                        formatIsoTime(end, axis.utc_offset_min, 3), end - start,
                                        axis.dt_s));
  axis.start_unix_s = static_cast<std::int64_t>(start);
  axis.steps = static_cast<std::size_t>(intervals) + 1;
  return axis;
}

/// Places samples that lie on the grid (no resampling asked for).
std::vector<double> placeOnGrid(const RawSeries& s, const routing::TimeAxis& axis,
                                const std::string& file, const std::string& id) {
  std::vector<double> out(axis.steps, 0.0);
  std::optional<std::size_t> lo, hi;
  for (std::size_t k = 0; k < s.t_s.size(); ++k) {
    const double index = (s.t_s[k] - axis.at(0)) / axis.dt_s;
    const double nearest = std::round(index);
    if (std::abs(index - nearest) * axis.dt_s > kTimeTolerance_s) {
      InputLocation where = at(file, s.line[k]);
      where.reach_id = id;
      where.field = "time";
      throw InputError(where, fmt::format("the time is not on the run's grid ({} + k × {} s); "
                                          "give a time step to resample",
                                          formatIsoTime(axis.start_unix_s, axis.utc_offset_min),
                                          axis.dt_s));
    }
    if (nearest < 0 || nearest >= static_cast<double>(axis.steps)) continue;  // outside the window
    const auto i = static_cast<std::size_t>(nearest);
    out[i] = s.q_m3s[k];
    if (!lo) lo = i;
    hi = i;
  }
  if (!lo) {  // no sample inside the window: hold the nearer end value
    std::fill(out.begin(), out.end(), s.t_s.front() > axis.at(0) ? s.q_m3s.front() : s.q_m3s.back());
    return out;
  }
  std::fill(out.begin(), out.begin() + static_cast<std::ptrdiff_t>(*lo), out[*lo]);
  std::fill(out.begin() + static_cast<std::ptrdiff_t>(*hi) + 1, out.end(), out[*hi]);
  return out;
}

/// Linear interpolation in time between the samples; held at the first and
/// last value outside them.
std::vector<double> resample(const RawSeries& s, const routing::TimeAxis& axis) {
  std::vector<double> out(axis.steps);
  std::size_t j = 0;
  const std::size_t n = s.t_s.size();
  for (std::size_t k = 0; k < axis.steps; ++k) {
    const double t = axis.at(static_cast<double>(k));
    while (j + 1 < n && s.t_s[j + 1] <= t) ++j;
    if (t <= s.t_s.front()) {
      out[k] = s.q_m3s.front();
    } else if (j + 1 >= n) {
      out[k] = s.q_m3s.back();
    } else {
      const double w = (t - s.t_s[j]) / (s.t_s[j + 1] - s.t_s[j]);
      out[k] = s.q_m3s[j] + w * (s.q_m3s[j + 1] - s.q_m3s[j]);
    }
  }
  return out;
}

std::string listIds(const std::vector<std::string>& ids) {
  constexpr std::size_t kShown = 10;
  if (ids.size() <= kShown) return fmt::format("{}", fmt::join(ids, ", "));
  return fmt::format("{}, and {} more", fmt::join(ids.begin(), ids.begin() + kShown, ", "),
                     ids.size() - kShown);
}

void noteHolds(const CsvForcingFile& file, ForcingKind kind, const routing::TimeAxis& axis,
               std::vector<std::string>& warnings) {
  std::vector<std::string> before, after;
  const double end = axis.at(static_cast<double>(axis.steps - 1));
  for (const auto& [id, s] : file.series) {
    if (s.t_s.front() > axis.at(0) + kTimeTolerance_s) before.push_back(id);
    if (s.t_s.back() < end - kTimeTolerance_s) after.push_back(id);
  }
  if (!before.empty())
    warnings.push_back(fmt::format("{} file {}: {} series held at their first value before their "
                                   "data begin: {}", kindName(kind), file.file, before.size(),
                                   listIds(before)));
  if (!after.empty())
    warnings.push_back(fmt::format("{} file {}: {} series held at their last value after their "
                                   "data end: {}", kindName(kind), file.file, after.size(),
                                   listIds(after)));
}

}  // namespace

Forcing buildForcing(const CsvForcingFile* inflow, const CsvForcingFile* lateral,
                     const CsvForcingOptions& options) {
  if (!inflow && !lateral) throw InvalidParameter("forcing", "neither an inflow nor a lateral file");
  Forcing out;
  out.axis = chooseAxis(inflow, lateral, options);
  const bool resampling = options.dt_s.has_value();
  for (ForcingKind kind : {ForcingKind::Inflow, ForcingKind::Lateral}) {
    const CsvForcingFile* file = kind == ForcingKind::Inflow ? inflow : lateral;
    if (!file) continue;
    out.origin(kind) = file->file;
    for (const auto& [id, s] : file->series)
      out.series(kind)[id] = resampling ? resample(s, out.axis) : placeOnGrid(s, out.axis, file->file, id);
    noteHolds(*file, kind, out.axis, out.warnings);
  }
  return out;
}

Forcing readForcingCsv(const std::optional<std::filesystem::path>& inflow,
                       const std::optional<std::filesystem::path>& lateral,
                       const CsvForcingOptions& options) {
  std::optional<CsvForcingFile> in, lat;
  if (inflow) in = readForcingCsvFile(*inflow, options.unit);
  if (lateral) lat = readForcingCsvFile(*lateral, options.unit);
  return buildForcing(in ? &*in : nullptr, lat ? &*lat : nullptr, options);
}

}  // namespace reachwise::io
