#include "reachwise/io/ForcingCsv.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <memory>
#include <set>

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/CsvRecords.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "TextLocation.hpp"

namespace reachwise::io {
namespace {

using detail::textLocation;
using Fields = std::vector<std::string_view>;

std::string lower(std::string_view s) {
  std::string out(s);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

/// `s` equals `word` (lower case) in any case.
bool equalsAnyCase(std::string_view s, std::string_view word) {
  if (s.size() != word.size()) return false;
  for (std::size_t k = 0; k < s.size(); ++k)
    if (std::tolower(static_cast<unsigned char>(s[k])) != word[k]) return false;
  return true;
}

/// A missing observation: an empty cell, NA or NaN (any case).
bool isMissing(std::string_view raw) {
  const std::string_view s = trimCsvField(raw);
  return s.empty() || equalsAnyCase(s, "na") || equalsAnyCase(s, "nan");
}

/// The discharge in `raw` (blanks around it, a leading '+' allowed), in
/// m^3/s and readable (readableDischarge); false for anything
/// refuseDischarge refuses. parseCsvNumber reads the correctly rounded
/// double, as strtod does, without locale or allocation; it takes no
/// hexadecimal form (which the format does not have).
inline bool readDischarge(std::string_view raw, units::System unit, double& q) {
  std::string_view s = trimCsvField(raw);
  if (s.empty()) return false;
  if (s.front() == '+') s.remove_prefix(1);
  double value = 0;
  if (!parseCsvNumber(s, value) || !std::isfinite(value) || value < 0) return false;
  const double readable = readableDischarge(unit == units::System::USCustomary ? units::cfsToM3s(value) : value);
  if (std::isnan(readable)) return false;
  q = readable;
  return true;
}

/// Says why readDischarge refused `raw`, naming `where`.
[[noreturn]] void refuseDischarge(std::string_view raw, const InputLocation& where, units::System unit) {
  std::string_view s = trimCsvField(raw);
  if (s.empty()) throw InputError(where, "the discharge is empty");
  if (s.front() == '+') s.remove_prefix(1);
  double value = 0;
  if (!parseCsvNumber(s, value))
    throw InputError(where, fmt::format("'{}' is not a finite number", trimCsvField(raw)));
  if (!std::isfinite(value))
    throw InputError(where, fmt::format("discharge '{}' is not finite", trimCsvField(raw)));
  if (value < 0) throw InputError(where, fmt::format("discharge {} is negative", trimCsvField(raw)));
  const double q = unit == units::System::USCustomary ? units::cfsToM3s(value) : value;
  throw InputError(where, dischargeProblem(q));
}

/// The time in `raw`; an InputError at `where()` (its field set to "time")
/// saying what is wrong with it.
template <class Where>
IsoTime parseTime(std::string_view raw, const Where& where) {
  try {
    return parseIsoTime(raw);
  } catch (const InvalidParameter& e) {
    std::string message = e.what();
    if (message.starts_with("time: ")) message.erase(0, 6);
    InputLocation at = where();
    at.field = "time";
    throw InputError(at, message);
  }
}

void checkFieldCount(const Fields& fields, std::int64_t line, std::size_t expected, const std::string& file) {
  if (fields.size() != expected)
    throw InputError(textLocation(file, line),
                     fmt::format("{} fields where the header has {}", fields.size(), expected));
}

/// A series' values held in as little memory as they need: a vector that
/// grew by doubling gives its spare capacity back (a copy, one series at
/// a time) when that is more than a thirty-second of it.
void shrink(RawSeries& s) {
  if (s.q_m3s.capacity() - s.q_m3s.size() > s.q_m3s.size() / 32) s.q_m3s.shrink_to_fit();
}

/// Lines in the file at `path` (line ends counted, plus one), read in
/// blocks: an upper bound of its records, to size the wide form's columns
/// once instead of growing them.
std::size_t countLines(const std::filesystem::path& path) {
  std::FILE* f = std::fopen(path.c_str(), "rb");
  if (!f) return 0;
  std::vector<char> block(std::size_t{1} << 20);
  std::size_t lines = 1, got = 0;
  while ((got = std::fread(block.data(), 1, block.size(), f)) > 0)
    lines += static_cast<std::size_t>(std::count(block.data(), block.data() + got, '\n'));
  std::fclose(f);
  return lines;
}

/// At most how many records follow the header of the wide form: one a
/// line, and one per `columns` bytes (a record has a comma between each
/// two of its fields), whichever is less.
std::size_t rowsAtMost(const std::filesystem::path& path, std::int64_t header_line, std::size_t columns) {
  const std::size_t lines = countLines(path);
  const auto header = static_cast<std::size_t>(std::max<std::int64_t>(header_line, 1));
  std::error_code ec;
  const auto bytes = static_cast<std::size_t>(std::filesystem::file_size(path, ec));
  if (ec) return 0;
  return std::min(lines > header ? lines - header : 0, bytes / std::max<std::size_t>(columns, 1) + 1);
}

/// Rows of a file, one at a time, after its header.
class RowReader {
public:
  virtual ~RowReader() = default;
  virtual void row(const Fields& fields, std::int64_t line) = 0;
  virtual void finish() {}
};

/// `reach_id,time,discharge`, the columns in any order.
class LongReader final : public RowReader {
public:
  LongReader(const Fields& header, CsvForcingFile& out, units::System unit, CsvValues values)
      : out_(out), unit_(unit), values_(values), columns_(header.size()) {
    for (std::size_t c = 0; c < header.size(); ++c) {
      const std::string name = lower(trimCsvField(header[c]));
      (name == "reach_id" ? col_id_ : name == "time" ? col_time_ : col_q_) = c;
    }
  }
  void row(const Fields& fields, std::int64_t line) override {
    checkFieldCount(fields, line, columns_, out_.file);
    const std::string_view id = trimCsvField(fields[col_id_]);
    const std::string_view time_text = fields[col_time_];
    auto where = [&] {
      InputLocation at = textLocation(out_.file, line);
      at.reach_id = std::string(id);
      return at;
    };
    if (id.empty()) {
      InputLocation at = textLocation(out_.file, line);
      at.field = "reach_id";
      throw InputError(at, "the reach id is empty");
    }
    // Rows of one time often follow each other: the text read last is not read again.
    if (!have_time_ || time_text != last_time_text_) {
      last_time_ = parseTime(time_text, where);
      last_time_text_.assign(time_text);
      have_time_ = true;
    }
    const IsoTime& t = last_time_;
    if (out_.series.empty()) out_.utc_offset_min = t.utc_offset_min;
    auto whereAtTime = [&] {
      InputLocation at = where();
      at.time = std::string(trimCsvField(time_text));
      return at;
    };
    if (values_ == CsvValues::Observed && isMissing(fields[col_q_])) return;
    double q = 0;
    if (!readDischarge(fields[col_q_], unit_, q)) {
      InputLocation at = whereAtTime();
      at.field = "discharge";
      refuseDischarge(fields[col_q_], at, unit_);
    }
    // Rows of one reach usually follow each other: the last series found is tried first.
    if (!last_ || last_id_ != id) {
      auto it = out_.series.find(id);
      if (it == out_.series.end()) {
        it = out_.series.emplace(std::string(id), RawSeries{}).first;
        // A reach's rows in one block: the next reach likely has as many as the last.
        if (last_) it->second.q_m3s.reserve(last_->q_m3s.size());
      }
      last_ = &it->second;
      last_id_.assign(id);
    }
    RawSeries& series = *last_;
    const double seconds = t.seconds();
    if (!series.t_s.empty() && seconds <= series.t_s.back() + kSameInstant_s) {
      const double before = series.t_s.back();
      const bool same = std::abs(seconds - before) <= kSameInstant_s;
      InputLocation at = whereAtTime();
      at.field = "time";
      throw InputError(at, fmt::format("this reach's time {} line {}",
                                       same ? "repeats the time on" : "is earlier than the time on",
                                       series.line.back()));
    }
    series.t_s.push_back(seconds);
    series.q_m3s.push_back(q);
    series.line.push_back(line);
  }
  void finish() override {
    for (auto& entry : out_.series) shrink(entry.second);
  }

private:
  CsvForcingFile& out_;
  units::System unit_;
  CsvValues values_;
  std::size_t columns_, col_id_ = 0, col_time_ = 0, col_q_ = 0;
  std::string last_id_, last_time_text_;
  IsoTime last_time_;
  bool have_time_ = false;
  RawSeries* last_ = nullptr;
};

/// `time,<reach id>,<reach id>,...`. The rows' times and lines are kept
/// once for the file; each column keeps its values only (in an array of
/// columns, so that a row writes one value per column and nothing else)
/// until it skips a row (an empty or missing cell): from then on that
/// column keeps its own times and lines.
class WideReader final : public RowReader {
public:
  WideReader(const Fields& header, std::int64_t header_line, CsvForcingFile& out, units::System unit,
             CsvValues values, std::size_t rows_at_most)
      : out_(out), unit_(unit), values_(values), columns_(header.size()), header_line_(header_line) {
    std::set<std::string, std::less<>> seen;
    for (std::size_t c = 1; c < header.size(); ++c) {
      std::string id(trimCsvField(header[c]));
      InputLocation where = textLocation(out.file, header_line);
      if (id.empty()) throw InputError(where, fmt::format("column {} has no reach id in the header", c + 1));
      where.reach_id = id;
      if (!seen.insert(id).second) throw InputError(where, "the reach id appears in two columns");
      ids_.push_back(std::move(id));
    }
    // Each column's values are stored once, sized from the file's line count.
    q_.resize(ids_.size());
    own_.resize(ids_.size());
    for (std::vector<double>& q : q_) q.reserve(rows_at_most);
  }
  void row(const Fields& fields, std::int64_t line) override {
    checkFieldCount(fields, line, columns_, out_.file);
    auto where = [&] { return textLocation(out_.file, line); };
    const IsoTime t = parseTime(fields[0], where);
    const std::string_view time_text = trimCsvField(fields[0]);
    if (rows_t_.empty()) out_.utc_offset_min = t.utc_offset_min;
    const double seconds = t.seconds();
    if (!rows_t_.empty() && seconds <= previous_ + kSameInstant_s) {
      InputLocation at = where();
      at.time = std::string(time_text);
      at.field = "time";
      const bool same = std::abs(seconds - previous_) <= kSameInstant_s;
      throw InputError(at, fmt::format("the time {} line {}",
                                       same ? "repeats the time on" : "is earlier than the time on",
                                       previous_line_));
    }
    previous_ = seconds;
    previous_line_ = line;
    // The rows' times increase (checked above), so each column's do.
    for (std::size_t c = 1; c < fields.size(); ++c) {
      const std::string_view cell = fields[c];
      double q = 0;
      if (!readDischarge(cell, unit_, q)) {
        const bool skipped = trimCsvField(cell).empty() ||  // no sample of this reach at this time
                             (values_ == CsvValues::Observed && isMissing(cell));
        if (skipped) {
          if (!own_[c - 1]) ownTimes(c - 1);
          continue;
        }
        InputLocation at = where();
        at.time = std::string(time_text);
        at.reach_id = ids_[c - 1];
        at.field = "discharge";
        refuseDischarge(cell, at, unit_);
      }
      q_[c - 1].push_back(q);
      if (OwnTimes* own = own_[c - 1].get()) {
        own->t_s.push_back(seconds);
        own->line.push_back(line);
      }
    }
    rows_t_.push_back(seconds);
    rows_line_.push_back(line);
  }
  void finish() override {
    for (std::size_t c = 0; c < ids_.size(); ++c) {
      if (!q_[c].empty()) continue;
      InputLocation where = textLocation(out_.file, header_line_);
      where.reach_id = ids_[c];
      throw InputError(where, "the column has no values");
    }
    for (std::size_t c = 0; c < ids_.size(); ++c) {
      RawSeries& s = out_.series.emplace(ids_[c], RawSeries{}).first->second;
      s.q_m3s = std::move(q_[c]);
      s.t_s = own_[c] ? std::move(own_[c]->t_s) : rows_t_;
      s.line = own_[c] ? std::move(own_[c]->line) : rows_line_;
      own_[c].reset();
      shrink(s);
    }
  }

private:
  /// The times and lines of a column that skipped a row.
  struct OwnTimes {
    SteppedSequence<double> t_s;
    SteppedSequence<std::int64_t> line;
  };

  /// Column `c` skips the current row; it had a value in every row before.
  void ownTimes(std::size_t c) {
    own_[c] = std::make_unique<OwnTimes>();
    for (std::size_t k = 0; k < q_[c].size(); ++k) {
      own_[c]->t_s.push_back(rows_t_[k]);
      own_[c]->line.push_back(rows_line_[k]);
    }
  }

  CsvForcingFile& out_;
  units::System unit_;
  CsvValues values_;
  std::size_t columns_;
  std::int64_t header_line_;
  std::vector<std::string> ids_;
  std::vector<std::vector<double>> q_;     // the values of column c + 1 of the file
  std::vector<std::unique_ptr<OwnTimes>> own_;  // its own times, once it skipped a row
  SteppedSequence<double> rows_t_;         // every row's time and line
  SteppedSequence<std::int64_t> rows_line_;
  double previous_ = 0;
  std::int64_t previous_line_ = 0;
};

CsvLayout detectLayout(const Fields& header, std::int64_t line, const std::string& file) {
  std::multiset<std::string> names;
  for (const auto& f : header) names.insert(lower(trimCsvField(f)));
  if (names == std::multiset<std::string>{"discharge", "reach_id", "time"}) return CsvLayout::Long;
  if (header.size() >= 2 && lower(trimCsvField(header[0])) == "time" && !names.contains("reach_id"))
    return CsvLayout::Wide;
  throw InputError(textLocation(file, line),
                   "the header must be 'reach_id,time,discharge' (long form) or "
                   "'time,<reach id>,<reach id>,...' (wide form)");
}

}  // namespace

CsvForcingFile readForcingCsvFile(const std::filesystem::path& path, units::System unit, CsvValues values) {
  CsvForcingFile out;
  out.file = path.string();
  // One record at a time from a block of the file: the text is never held
  // whole, the fields are views of the block, each value is stored once.
  CsvScanner scanner(path);
  if (!scanner.next()) throw InputError(textLocation(out.file, 1), "the file is empty (expected a header line)");
  const std::int64_t header_line = scanner.line();
  out.layout = detectLayout(scanner.fields(), header_line, out.file);
  std::unique_ptr<RowReader> reader;
  if (out.layout == CsvLayout::Long)
    reader = std::make_unique<LongReader>(scanner.fields(), out, unit, values);
  else
    reader = std::make_unique<WideReader>(scanner.fields(), header_line, out, unit, values,
                                          rowsAtMost(path, header_line, scanner.fields().size()));
  std::size_t rows = 0;
  while (scanner.next()) {
    ++rows;
    reader->row(scanner.fields(), scanner.line());
  }
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
  // The values are moved from the files into the forcing, not copied.
  return takeForcing(in ? &*in : nullptr, lat ? &*lat : nullptr, options);
}

}  // namespace reachwise::io
