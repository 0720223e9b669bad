#include "reachwise/io/ForcingCsv.hpp"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <fstream>
#include <memory>
#include <set>
#include <sstream>

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/CsvRecords.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "TextLocation.hpp"

namespace reachwise::io {
namespace {

using detail::textLocation;

std::string lower(std::string_view s) {
  std::string out(s);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

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

/// A missing observation: an empty cell, NA or NaN (any case).
bool isMissing(std::string_view raw) {
  const std::string s = lower(trimCsvField(raw));
  return s.empty() || s == "na" || s == "nan";
}

double parseDischarge(std::string_view raw, const InputLocation& where, units::System unit) {
  std::string_view s = trimCsvField(raw);
  if (s.empty()) throw InputError(where, "the discharge is empty");
  if (s.front() == '+') s.remove_prefix(1);
  double value = 0;
  const auto [end, ec] = std::from_chars(s.data(), s.data() + s.size(), value);
  if (ec != std::errc{} || end != s.data() + s.size())
    throw InputError(where, fmt::format("'{}' is not a finite number", trimCsvField(raw)));
  if (!std::isfinite(value))
    throw InputError(where, fmt::format("discharge '{}' is not finite", trimCsvField(raw)));
  if (value < 0) throw InputError(where, fmt::format("discharge {} is negative", trimCsvField(raw)));
  const double q = unit == units::System::USCustomary ? units::cfsToM3s(value) : value;
  const double readable = readableDischarge(q);
  if (std::isnan(readable)) throw InputError(where, dischargeProblem(q));
  return readable;
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
  if (!series.t_s.empty() && t <= series.t_s.back() + kSameInstant_s) {
    const bool same = std::abs(t - series.t_s.back()) <= kSameInstant_s;
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
    throw InputError(textLocation(file, record.line),
                     fmt::format("{} fields where the header has {}", record.fields.size(), expected));
}

/// Rows of a file, one at a time, after its header.
class RowReader {
public:
  virtual ~RowReader() = default;
  virtual void row(const CsvRecord& rec) = 0;
  virtual void finish() {}
};

/// `reach_id,time,discharge`, the columns in any order.
class LongReader final : public RowReader {
public:
  LongReader(const CsvRecord& header, CsvForcingFile& out, units::System unit, CsvValues values)
      : out_(out), unit_(unit), values_(values), columns_(header.fields.size()) {
    for (std::size_t c = 0; c < header.fields.size(); ++c) {
      const std::string name = lower(trimCsvField(header.fields[c]));
      (name == "reach_id" ? col_id_ : name == "time" ? col_time_ : col_q_) = c;
    }
  }
  void row(const CsvRecord& rec) override {
    checkFieldCount(rec, columns_, out_.file);
    InputLocation where = textLocation(out_.file, rec.line);
    const std::string_view id = trimCsvField(rec.fields[col_id_]);
    if (id.empty()) {
      where.field = "reach_id";
      throw InputError(where, "the reach id is empty");
    }
    where.reach_id = std::string(id);
    const IsoTime t = parseTime(rec.fields[col_time_], where);
    if (out_.series.empty()) out_.utc_offset_min = t.utc_offset_min;
    where.time = std::string(trimCsvField(rec.fields[col_time_]));
    if (values_ == CsvValues::Observed && isMissing(rec.fields[col_q_])) return;
    InputLocation qwhere = where;
    qwhere.field = "discharge";
    const double q = parseDischarge(rec.fields[col_q_], qwhere, unit_);
    where.field = "time";
    // Rows of one reach usually follow each other: the last series found is tried first.
    if (!last_ || last_id_ != id) {
      last_ = &out_.series[where.reach_id];
      last_id_ = where.reach_id;
    }
    append(*last_, t.seconds(), q, where, "this reach's time");
  }

private:
  CsvForcingFile& out_;
  units::System unit_;
  CsvValues values_;
  std::size_t columns_, col_id_ = 0, col_time_ = 0, col_q_ = 0;
  std::string last_id_;
  RawSeries* last_ = nullptr;
};

/// `time,<reach id>,<reach id>,...`.
class WideReader final : public RowReader {
public:
  WideReader(const CsvRecord& header, CsvForcingFile& out, units::System unit, CsvValues values)
      : out_(out), unit_(unit), values_(values), columns_(header.fields.size()), header_line_(header.line) {
    std::set<std::string, std::less<>> seen;
    for (std::size_t c = 1; c < header.fields.size(); ++c) {
      std::string id(trimCsvField(header.fields[c]));
      InputLocation where = textLocation(out.file, header.line);
      if (id.empty()) throw InputError(where, fmt::format("column {} has no reach id in the header", c + 1));
      where.reach_id = id;
      if (!seen.insert(id).second) throw InputError(where, "the reach id appears in two columns");
      ids_.push_back(std::move(id));
    }
  }
  void row(const CsvRecord& rec) override {
    checkFieldCount(rec, columns_, out_.file);
    InputLocation where = textLocation(out_.file, rec.line);
    const IsoTime t = parseTime(rec.fields[0], where);
    where.time = std::string(trimCsvField(rec.fields[0]));
    if (rows_++ == 0) out_.utc_offset_min = t.utc_offset_min;
    if (rows_ > 1 && t.seconds() <= previous_ + kSameInstant_s) {
      where.field = "time";
      const bool same = std::abs(t.seconds() - previous_) <= kSameInstant_s;
      throw InputError(where, fmt::format("the time {} line {}",
                                          same ? "repeats the time on" : "is earlier than the time on",
                                          previous_line_));
    }
    previous_ = t.seconds();
    previous_line_ = rec.line;
    for (std::size_t c = 1; c < rec.fields.size(); ++c) {
      if (trimCsvField(rec.fields[c]).empty()) continue;  // no sample of this reach at this time
      if (values_ == CsvValues::Observed && isMissing(rec.fields[c])) continue;
      InputLocation qwhere = where;
      qwhere.reach_id = ids_[c - 1];
      qwhere.field = "discharge";
      const double q = parseDischarge(rec.fields[c], qwhere, unit_);
      append(out_.series[ids_[c - 1]], t.seconds(), q, qwhere, "the time");
    }
  }
  void finish() override {
    for (const std::string& id : ids_) {
      if (out_.series.contains(id)) continue;
      InputLocation where = textLocation(out_.file, header_line_);
      where.reach_id = id;
      throw InputError(where, "the column has no values");
    }
  }

private:
  CsvForcingFile& out_;
  units::System unit_;
  CsvValues values_;
  std::size_t columns_;
  std::int64_t header_line_;
  std::vector<std::string> ids_;
  std::size_t rows_ = 0;
  double previous_ = 0;
  std::int64_t previous_line_ = 0;
};

CsvLayout detectLayout(const CsvRecord& header, const std::string& file) {
  std::multiset<std::string> names;
  for (const auto& f : header.fields) names.insert(lower(trimCsvField(f)));
  if (names == std::multiset<std::string>{"discharge", "reach_id", "time"}) return CsvLayout::Long;
  if (header.fields.size() >= 2 && lower(trimCsvField(header.fields[0])) == "time" &&
      !names.contains("reach_id"))
    return CsvLayout::Wide;
  throw InputError(textLocation(file, header.line),
                   "the header must be 'reach_id,time,discharge' (long form) or "
                   "'time,<reach id>,<reach id>,...' (wide form)");
}

}  // namespace

CsvForcingFile readForcingCsvFile(const std::filesystem::path& path, units::System unit, CsvValues values) {
  CsvForcingFile out;
  out.file = path.string();
  // One record at a time: the text is held once, never a copy of every field.
  std::unique_ptr<RowReader> reader;
  std::int64_t header_line = 0;
  std::size_t rows = 0;
  forEachCsvRecord(readWhole(path), out.file, [&](const CsvRecord& rec) {
    if (!reader) {
      header_line = rec.line;
      out.layout = detectLayout(rec, out.file);
      if (out.layout == CsvLayout::Long) reader = std::make_unique<LongReader>(rec, out, unit, values);
      else reader = std::make_unique<WideReader>(rec, out, unit, values);
      return;
    }
    ++rows;
    reader->row(rec);
  });
  if (!reader) throw InputError(textLocation(out.file, 1), "the file is empty (expected a header line)");
  if (rows == 0) throw InputError(textLocation(out.file, header_line + 1), "no data rows after the header");
  reader->finish();
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
