#include <fmt/format.h>
#include <ogr_geometry.h>

#include <cctype>
#include <cmath>
#include <cstdlib>
#include <fstream>
#include <memory>
#include <optional>
#include <cerrno>
#include <system_error>


#include "ResultsTables.hpp"
#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/io/OutputFiles.hpp"
#include "reachwise/io/ResultsWriter.hpp"

namespace reachwise::io {

namespace fs = std::filesystem;
using results::Value;

namespace {

[[noreturn]] void failAt(const fs::path& file, const std::string& what) {
  InputLocation at;
  at.file = file.string();
  throw InputError(at, what);
}

void prepareDirectory(const fs::path& dir) {
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec || !fs::is_directory(dir)) failAt(dir, "cannot create the output directory");
}

/// Text a spreadsheet would run as a formula: it begins with `=`, `+`, `-`,
/// `@`, a tab or a carriage return, and is not a plain number (`-12`, `+1.5e3`
/// are harmless and stay as they are).
bool formulaLike(const std::string& text) {
  if (text.empty() || std::string_view("=+-@\t\r").find(text.front()) == std::string_view::npos) return false;
  if (text.front() != '+' && text.front() != '-') return true;
  const char* begin = text.c_str();
  char* end = nullptr;
  errno = 0;
  (void)std::strtod(begin, &end);
  const bool number = end == begin + text.size() && std::isdigit(static_cast<unsigned char>(text[1]));
  return !number;
}

/// RFC 4180 quoting, only when the text needs it; and formula-like text
/// gets quotes and a leading apostrophe, the common defence against CSV
/// formula injection (OWASP, "CSV Injection", from memory).
/// docs/formats.md, "CSV", states the rule for reading ids back.
std::string quoted(const std::string& text) {
  const bool formula = formulaLike(text);
  if (!formula && text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = formula ? "\"'" : "\"";
  for (const char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + '"';
}

std::string cell(const Value& value, int utc_offset_min) {
  if (const auto* d = std::get_if<double>(&value)) return fmt::format("{}", *d);
  if (const auto* i = std::get_if<std::int64_t>(&value)) return fmt::format("{}", *i);
  if (const auto* s = std::get_if<std::string>(&value)) return quoted(*s);
  if (const auto* t = std::get_if<results::Instant>(&value))
    return formatIsoTime(t->unix_s, results::writableOffsetMin(utc_offset_min), 3);
  return {};
}

std::string real(double v) { return std::isnan(v) ? std::string() : fmt::format("{}", v); }

std::string wkt(const std::vector<network::Point3>& line) {
  if (line.size() < 2) return {};
  std::string out = "\"LINESTRING (";
  for (std::size_t k = 0; k < line.size(); ++k)
    out += fmt::format("{}{} {}", k ? ", " : "", line[k].x, line[k].y);
  return out + ")\"";
}

/// A lake's polygon(s) as WKT `MULTIPOLYGON`, as the GeoPackage layer holds
/// them (quoted: the text holds commas); empty when there is none.
std::string lakeWkt(const std::string& wkt) {
  if (wkt.empty()) return {};
  OGRGeometry* g = nullptr;
  if (OGRGeometryFactory::createFromWkt(wkt.c_str(), nullptr, &g) != OGRERR_NONE) return {};
  std::unique_ptr<OGRGeometry> multi(OGRGeometryFactory::forceToMultiPolygon(g));
  OGRErr err = OGRERR_NONE;
  const std::string text = multi->exportToWkt(OGRWktOptions(), &err);  // 15 significant digits
  return err == OGRERR_NONE ? quoted(text) : std::string();
}

/// Whole-second steps need no fraction in the time stamps of a series.
int seriesFractionDigits(const routing::TimeAxis& axis) { return axis.dt_s == std::floor(axis.dt_s) ? 0 : 3; }

}  // namespace

/// A text file written under a temporary name beside its target and renamed
/// onto it in commit(); removed when destroyed before that.
namespace detail {
struct TextFileOutput {
  TextFileOutput(const fs::path& dir, const std::string& name, bool overwrite)
      : target(dir / name), tmp(partialPath(target)) {
    refuseExisting(target, overwrite);
    errno = 0;
    out.open(tmp, std::ios::binary | std::ios::trunc);
    if (!out) failWithErrno("cannot create the output file");
  }
  ~TextFileOutput() {
    if (committed) return;
    out.close();
    std::error_code ec;
    fs::remove(tmp, ec);
  }
  TextFileOutput(const TextFileOutput&) = delete;
  TextFileOutput& operator=(const TextFileOutput&) = delete;

  /// The error of the last write, with the system's reason when it left one
  /// (errno read at once, before anything else can change it).
  [[noreturn]] void failWithErrno(const std::string& what) const {
    const int e = errno;
    if (e != 0) throwSystemError(target, what, e);
    failAt(target, what);
  }

  /// Closes the file and hands it to `into` (or renames it in place alone).
  void commit(OutputCommit* into = nullptr) {
    errno = 0;
    out.flush();
    if (!out) failWithErrno("cannot write the output file");
    out.close();
    if (!out) failWithErrno("cannot write the output file");
    committed = true;  // from here on the OutputCommit owns the file
    if (into) {
      into->add(tmp, target);
    } else {
      OutputCommit own(true);
      own.add(tmp, target);
      own.commit();
    }
  }

  fs::path target, tmp;
  std::ofstream out;
  bool committed = false;
};
}  // namespace detail

namespace {

using Stream = detail::TextFileOutput;

void header(std::ostream& out, const std::vector<results::Column>& columns) {
  for (std::size_t c = 0; c < columns.size(); ++c) out << (c ? "," : "") << columns[c].name;
}

void writeRow(std::ostream& out, const results::Row& row, int offset) {
  for (std::size_t c = 0; c < row.size(); ++c) out << (c ? "," : "") << cell(row[c], offset);
}

/// `row` (SI, for `columns`) in `system`, then written.
void writeRow(std::ostream& out, results::Row row, const std::vector<results::Column>& columns, int offset,
              units::System system) {
  results::convertRow(row, columns, system);
  writeRow(out, row, offset);
}

/// `v` (SI) in `system`, written (NaN: empty).
std::string real(double v, units::System system, Quantity quantity) {
  return real(toOutputUnits(system, quantity, v));
}

}  // namespace

void writeCsvTables(const fs::path& dir, bool overwrite, const network::ReachTable& table,
                    const network::NetworkPlan& plan, const routing::NetworkResults& results,
                    const RunInfo& info, const CsvLakes& csv_lakes, const std::vector<GaugeOutput>* gauges,
                    OutputCommit* into, units::System u, const EnsembleOutput* ensemble) {
  REACHWISE_ASSERT(results.reaches.size() == plan.size());
  prepareDirectory(dir);
  const int offset = results.axis.utc_offset_min;
  // All are opened first, so that a refusal to overwrite leaves nothing new.
  Stream reaches(dir, "reaches.csv", overwrite);
  Stream nodes(dir, "nodes.csv", overwrite);
  Stream branches(dir, "confluence_branches.csv", overwrite);
  Stream run_info(dir, "run_info.csv", overwrite);
  std::unique_ptr<Stream> lakes, lake_series;
  if (csv_lakes.lakes) {
    lakes = std::make_unique<Stream>(dir, kCsvLakeFiles[0], overwrite);
    lake_series = std::make_unique<Stream>(dir, kCsvLakeFiles[1], overwrite);
  }
  std::unique_ptr<Stream> member_reaches;
  if (ensemble) member_reaches = std::make_unique<Stream>(dir, std::string(kMemberReachesTable) + ".csv", overwrite);
  std::unique_ptr<Stream> gauge_table, gauge_series;
  if (gauges) {
    gauge_table = std::make_unique<Stream>(dir, kCsvGaugeFiles[0], overwrite);
    gauge_series = std::make_unique<Stream>(dir, kCsvGaugeFiles[1], overwrite);
  }

  const std::vector<results::Column>& reach_columns =
      ensemble ? results::ensembleRunReachColumns() : results::reachColumns();
  header(reaches.out, results::inUnits(reach_columns, u));
  reaches.out << ",geometry\n";
  for (std::size_t i = 0; i < plan.size(); ++i) {
    auto row = results::reachRow(plan, results.reaches[i], i);
    if (ensemble) {
      auto more = results::ensembleReachRow(*ensemble, i);
      row.insert(row.end(), std::make_move_iterator(more.begin()), std::make_move_iterator(more.end()));
    }
    writeRow(reaches.out, std::move(row), reach_columns, offset, u);
    reaches.out << ',' << wkt(results::flowLine(table, plan, i)) << '\n';
  }
  if (ensemble) {
    header(member_reaches->out, results::inUnits(results::memberReachColumns(), u));
    member_reaches->out << '\n';
    for (std::size_t m = 0; m < ensemble->members.size(); ++m)
      for (std::size_t i = 0; i < plan.size(); ++i) {
        writeRow(member_reaches->out, results::memberReachRow(plan, *ensemble, m, i), results::memberReachColumns(),
                 offset, u);
        member_reaches->out << '\n';
      }
  }

  header(nodes.out, results::inUnits(results::nodeColumns(), u));
  nodes.out << ",x,y\n";
  header(branches.out, results::inUnits(results::branchColumns(), u));
  branches.out << '\n';
  for (const auto& node : results.nodes) {
    writeRow(nodes.out, results::nodeRow(plan, node), results::nodeColumns(), offset, u);
    nodes.out << ',' << real(node.x) << ',' << real(node.y) << '\n';
    for (const auto& branch : node.branches) {
      writeRow(branches.out, results::branchRow(plan, node, branch), results::branchColumns(), offset, u);
      branches.out << '\n';
    }
  }

  run_info.out << "key,value\n";
  for (const auto& [key, value] : results::runInfoRows(results, info))
    run_info.out << quoted(key) << ',' << quoted(value) << '\n';

  if (csv_lakes.lakes) {
    const routing::TimeAxis& axis = results.axis;
    header(lakes->out, results::inUnits(results::lakeColumns(), u));
    lakes->out << ",geometry\n";
    header(lake_series->out, results::inUnits(results::lakeSeriesColumns(), u));
    lake_series->out << '\n';
    const int series_offset = results::writableOffsetMin(axis.utc_offset_min);
    const int digits = seriesFractionDigits(axis);
    for (const LakeOutput& lake : *csv_lakes.lakes) {
      writeRow(lakes->out, results::lakeRow(axis, lake), results::lakeColumns(), offset, u);
      lakes->out << ',' << lakeWkt(lake.lake->wkt) << '\n';
      if (!csv_lakes.series) continue;
      const auto series = results::lakeSeries(lake, axis.steps);
      const auto id = quoted(lake.lake->lake_id);
      for (std::size_t k = 0; k < axis.steps; ++k) {
        lake_series->out << id << ',' << formatIsoTime(axis.at(static_cast<double>(k)), series_offset, digits);
        for (std::size_t v = 0; v < series.size(); ++v)
          lake_series->out << ',' << real(series[v][k], u, results::kLakeSeriesQuantities[v]);
        lake_series->out << '\n';
      }
    }
  }

  if (gauges) {
    // The `gauges` layer's fields and the point as x, y; the series as the
    // `gauge_series` table holds them (NaN, no record: empty).
    const routing::TimeAxis& axis = results.axis;
    header(gauge_table->out, results::inUnits(results::gaugeColumns(), u));
    gauge_table->out << ",x,y\n";
    header(gauge_series->out, results::inUnits(results::gaugeSeriesColumns(), u));
    gauge_series->out << '\n';
    const int series_offset = results::writableOffsetMin(axis.utc_offset_min);
    const int digits = seriesFractionDigits(axis);
    const auto at = [u](const std::vector<double>* v, std::size_t k) {
      return v && k < v->size() ? real((*v)[k], u, Quantity::Discharge) : std::string();
    };
    for (const GaugeOutput& gauge : *gauges) {
      writeRow(gauge_table->out, results::gaugeRow(gauge), results::gaugeColumns(), offset, u);
      gauge_table->out << ',' << real(gauge.x) << ',' << real(gauge.y) << '\n';
      const auto id = quoted(gauge.gauge_id);
      for (std::size_t k = 0; k < axis.steps; ++k)
        gauge_series->out << id << ',' << formatIsoTime(axis.at(static_cast<double>(k)), series_offset, digits)
                          << ',' << at(gauge.observed, k) << ',' << at(gauge.simulated, k) << '\n';
    }
  }

  // Handed over together: the caller's OutputCommit, or one of their own.
  std::optional<OutputCommit> own;
  if (!into) into = &own.emplace(overwrite);
  for (Stream* s : {&reaches, &nodes, &branches, &run_info, lakes.get(), lake_series.get(), gauge_table.get(),
                    gauge_series.get(), member_reaches.get()})
    if (s) s->commit(into);
  if (own) own->commit();
}

CsvSeriesWriter::CsvSeriesWriter(const fs::path& dir, bool overwrite,
                                 const network::NetworkPlan& plan, const routing::TimeAxis& axis,
                                 SeriesSelection selection, units::System system, bool member_column)
    : plan_(plan), axis_(axis), selected_(selection.mask(plan.size())), units_(system),
      member_column_(member_column) {
  prepareDirectory(dir);
  out_ = std::make_unique<Stream>(dir, "hydrographs.csv", overwrite);
  fraction_digits_ = seriesFractionDigits(axis_);
  out_->out << (member_column_ ? "member," : "") << "reach_id,time,q,depth,velocity\n";
}

void CsvSeriesWriter::setMember(const std::string& name) { member_ = quoted(name) + ','; }

CsvSeriesWriter::~CsvSeriesWriter() = default;

void CsvSeriesWriter::write(std::uint32_t reach, std::span<const double> q_m3s,
                            std::span<const double> depth_m, std::span<const double> velocity_ms) {
  REACHWISE_ASSERT(out_ && !out_->committed);
  REACHWISE_ASSERT(reach < plan_.size());
  if (!selected_[reach]) return;
  REACHWISE_ASSERT(q_m3s.size() == axis_.steps);
  REACHWISE_ASSERT(depth_m.empty() || depth_m.size() == axis_.steps);
  REACHWISE_ASSERT(velocity_ms.empty() || velocity_ms.size() == axis_.steps);
  const auto id = quoted(plan_.reach_id[reach]);
  const int offset = results::writableOffsetMin(axis_.utc_offset_min);
  auto& out = out_->out;
  for (std::size_t k = 0; k < axis_.steps; ++k) {
    if (member_column_) out << member_;
    out << id << ',' << formatIsoTime(axis_.at(static_cast<double>(k)), offset, fraction_digits_)
        << ',' << real(q_m3s[k], units_, Quantity::Discharge) << ','
        << (depth_m.empty() ? std::string() : real(depth_m[k], units_, Quantity::Length)) << ','
        << (velocity_ms.empty() ? std::string() : real(velocity_ms[k], units_, Quantity::Velocity)) << '\n';
  }
  if (!out) out_->failWithErrno("cannot write the output file");
}

void CsvSeriesWriter::commit(OutputCommit* into) {
  REACHWISE_ASSERT(out_ && !out_->committed);
  out_->commit(into);
}

}  // namespace reachwise::io
