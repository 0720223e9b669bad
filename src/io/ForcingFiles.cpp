#include "reachwise/io/ForcingFiles.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cstring>
#include <fstream>

#include "reachwise/Error.hpp"
#include "reachwise/io/ForcingNetcdf.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace reachwise::io {

namespace {

namespace fs = std::filesystem;

InputError fileError(const fs::path& file, const std::string& message) {
  InputLocation at;
  at.file = file.string();
  return InputError(at, message);
}

/// Serves each kind from its own source (one of them may be absent).
class PerKindSource final : public ForcingSource {
public:
  PerKindSource(std::unique_ptr<ForcingSource> inflow, std::unique_ptr<ForcingSource> lateral)
      : inflow_(std::move(inflow)), lateral_(std::move(lateral)) {}
  const routing::TimeAxis& axis() const override { return (inflow_ ? inflow_ : lateral_)->axis(); }
  bool fill(ForcingKind kind, std::string_view id, std::span<double> out) const override {
    if (const auto& s = of(kind)) return s->fill(kind, id, out);
    std::fill(out.begin(), out.end(), 0.0);
    return false;
  }
  std::vector<std::string> ids(ForcingKind kind) const override {
    const auto& s = of(kind);
    return s ? s->ids(kind) : std::vector<std::string>{};
  }
  using ForcingSource::ids;
  void visitIds(ForcingKind kind, const std::function<void(std::string_view)>& visit) const override {
    if (const auto& s = of(kind)) s->visitIds(kind, visit);
  }
  std::string origin(ForcingKind kind) const override {
    const auto& s = of(kind);
    return s ? s->origin(kind) : std::string();
  }
  bool readsOnDemand(ForcingKind kind) const override {
    const auto& s = of(kind);
    return s && s->readsOnDemand(kind);
  }

private:
  const std::unique_ptr<ForcingSource>& of(ForcingKind kind) const {
    return kind == ForcingKind::Inflow ? inflow_ : lateral_;
  }
  std::unique_ptr<ForcingSource> inflow_, lateral_;
};

std::unique_ptr<NetcdfForcingSource> openNetcdf(const fs::path& path, ForcingKind kind, std::size_t max_steps) {
  auto source = std::make_unique<NetcdfForcingSource>(path, max_steps);
  // Whether it has any: a visit, not ids(), which copies and sorts them all.
  bool any = false;
  source->visitIds(kind, [&](std::string_view) { any = true; });
  if (!any)
    throw fileError(path, fmt::format("given as {} forcing but has no `{}` variable (docs/formats.md, "
                                      "\"NetCDF layout\")",
                                      kindName(kind), kindName(kind)));
  return source;
}

bool sameAxis(const routing::TimeAxis& a, const routing::TimeAxis& b) {
  return a.start_unix_s == b.start_unix_s && a.dt_s == b.dt_s && a.steps == b.steps;
}

std::string describe(const routing::TimeAxis& a) {
  return fmt::format("{} steps of {} s from {}", a.steps, a.dt_s,
                     formatIsoTime(static_cast<double>(a.start_unix_s), a.utc_offset_min));
}

/// NetCDF forcing is not resampled: the options must agree with its axis.
void requireCompatible(const fs::path& file, const routing::TimeAxis& axis, const CsvForcingOptions& o) {
  if (o.dt_s && *o.dt_s != axis.dt_s)
    throw fileError(file, fmt::format("NetCDF forcing is not resampled: its step is {} s, the run asks "
                                      "for {} s",
                                      axis.dt_s, *o.dt_s));
  const auto last = axis.start_unix_s + static_cast<std::int64_t>(axis.duration_s());
  if ((o.start_unix_s && *o.start_unix_s != axis.start_unix_s) || (o.end_unix_s && *o.end_unix_s != last))
    throw fileError(file, fmt::format("NetCDF forcing sets the run's time axis ({}); a different "
                                      "start or end cannot be asked for",
                                      describe(axis)));
  if (o.on_axis && !sameAxis(*o.on_axis, axis))
    throw fileError(file, fmt::format("NetCDF forcing sets the run's time axis ({}); another axis ({}) "
                                      "cannot be asked for",
                                      describe(axis), describe(*o.on_axis)));
}

}  // namespace

bool isNetcdfFile(const fs::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::array<char, 8> head{};
  in.read(head.data(), head.size());
  if (in.gcount() < 4) return false;
  static constexpr char kHdf5[] = "\x89HDF\r\n\x1a\n";
  return std::memcmp(head.data(), "CDF", 3) == 0 ||
         (in.gcount() == 8 && std::memcmp(head.data(), kHdf5, 8) == 0);
}

OpenedForcing openForcing(const std::optional<fs::path>& inflow, const std::optional<fs::path>& lateral,
                          const CsvForcingOptions& options) {
  if (!inflow && !lateral) throw InvalidParameter("forcing", "no inflow or lateral file given");
  const bool nc_inflow = inflow && isNetcdfFile(*inflow);
  const bool nc_lateral = lateral && isNetcdfFile(*lateral);
  OpenedForcing opened;
  if (!nc_inflow && !nc_lateral) {
    Forcing f = readForcingCsv(inflow, lateral, options);
    opened.warnings = f.warnings;
    opened.source = std::make_unique<MemoryForcingSource>(std::move(f));
    return opened;
  }

  std::unique_ptr<ForcingSource> in_src, lat_src;
  if (nc_inflow) in_src = openNetcdf(*inflow, ForcingKind::Inflow, options.max_steps);
  if (nc_lateral) lat_src = openNetcdf(*lateral, ForcingKind::Lateral, options.max_steps);
  const fs::path& nc_file = nc_inflow ? *inflow : *lateral;
  const routing::TimeAxis axis = (in_src ? in_src : lat_src)->axis();
  requireCompatible(nc_file, axis, options);
  if (in_src && lat_src && !sameAxis(in_src->axis(), lat_src->axis()))
    throw fileError(*lateral, fmt::format("its time axis ({}) differs from the inflow file's ({})",
                                          describe(lat_src->axis()), describe(axis)));

  // A CSV file beside a NetCDF one is resampled onto the NetCDF axis.
  CsvForcingOptions beside;
  beside.unit = options.unit;
  beside.on_axis = axis;
  beside.max_steps = options.max_steps;
  auto readCsv = [&](const fs::path& path, bool as_inflow) {
    Forcing f = as_inflow ? readForcingCsv(path, std::nullopt, beside)
                          : readForcingCsv(std::nullopt, path, beside);
    for (auto& w : f.warnings) opened.warnings.push_back(w);
    return std::make_unique<MemoryForcingSource>(std::move(f));
  };
  if (inflow && !nc_inflow) in_src = readCsv(*inflow, true);
  if (lateral && !nc_lateral) lat_src = readCsv(*lateral, false);
  opened.source = std::make_unique<PerKindSource>(std::move(in_src), std::move(lat_src));
  return opened;
}

}  // namespace reachwise::io
