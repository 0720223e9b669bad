#include "reachwise/run/Ensemble.hpp"

#include <glob.h>

#include <fmt/format.h>
#include <tbb/blocked_range.h>
#include <tbb/info.h>
#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <filesystem>
#include <limits>
#include <map>
#include <mutex>
#include <set>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"
#include "reachwise/network/Problem.hpp"

namespace reachwise::run {

namespace {

namespace fs = std::filesystem;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

[[noreturn]] void membersError(const std::string& file, const std::string& message) {
  InputLocation at;
  at.file = file;
  at.field = "members";
  throw InputError(at, message);
}

/// A time axis as text, for errors.
std::string axisText(const routing::TimeAxis& a) {
  return fmt::format("{} steps of {} s from {}", a.steps, a.dt_s,
                     io::formatIsoTime(static_cast<double>(a.start_unix_s), a.utc_offset_min));
}

bool sameAxis(const routing::TimeAxis& a, const routing::TimeAxis& b) {
  return a.start_unix_s == b.start_unix_s && a.dt_s == b.dt_s && a.steps == b.steps &&
         a.utc_offset_min == b.utc_offset_min;
}

/// Keeps the series of the chosen reaches of one member's routing.
class Capture final : public routing::SeriesSink {
public:
  Capture(const std::vector<bool>& kept, std::size_t steps, MemberResult& out) : steps_(steps), out_(out) {
    position_.assign(kept.size(), kNone);
    for (std::uint32_t i = 0; i < kept.size(); ++i)
      if (kept[i]) {
        position_[i] = static_cast<std::uint32_t>(out.series_reaches.size());
        out.series_reaches.push_back(i);
      }
    const std::size_t n = out.series_reaches.size() * steps;
    out.q_m3s.assign(n, kNaN);
    out.depth_m.assign(n, kNaN);
    out.velocity_ms.assign(n, kNaN);
  }
  void write(std::uint32_t reach, std::span<const double> q, std::span<const double> d,
             std::span<const double> v) override {
    if (reach >= position_.size() || position_[reach] == kNone) return;
    const std::size_t at = static_cast<std::size_t>(position_[reach]) * steps_;
    std::copy_n(q.begin(), std::min(q.size(), steps_), out_.q_m3s.begin() + static_cast<std::ptrdiff_t>(at));
    if (!d.empty()) std::copy_n(d.begin(), std::min(d.size(), steps_), out_.depth_m.begin() + static_cast<std::ptrdiff_t>(at));
    if (!v.empty())
      std::copy_n(v.begin(), std::min(v.size(), steps_), out_.velocity_ms.begin() + static_cast<std::ptrdiff_t>(at));
  }
  bool wants(std::uint32_t reach) const override { return reach < position_.size() && position_[reach] != kNone; }

private:
  static constexpr std::uint32_t kNone = ~0u;
  std::size_t steps_;
  MemberResult& out_;
  std::vector<std::uint32_t> position_;
};

}  // namespace

double percentile(std::vector<double> values, double p) {
  if (!(p >= 0 && p <= 100)) throw InvalidParameter("percentile", fmt::format("{} is not within 0 to 100", p));
  values.erase(std::remove_if(values.begin(), values.end(), [](double x) { return std::isnan(x); }), values.end());
  if (values.empty()) return kNaN;
  std::sort(values.begin(), values.end());
  // Hyndman & Fan (1996), definition 7: h = (n - 1) p, interpolated between
  // the order statistics either side of it (0-based here).
  const double h = static_cast<double>(values.size() - 1) * p / 100.0;
  const auto j = static_cast<std::size_t>(std::floor(h));
  if (j + 1 >= values.size()) return values.back();
  const double g = h - static_cast<double>(j);
  return g == 0 ? values[j] : values[j] + g * (values[j + 1] - values[j]);
}

std::vector<std::string> memberFiles(const std::string& pattern) {
  std::vector<std::string> files;
  std::error_code ec;
  if (fs::is_directory(pattern, ec)) {
    for (const auto& entry : fs::directory_iterator(pattern, ec)) {
      const std::string name = entry.path().filename().string();
      if (!name.empty() && name.front() != '.' && entry.is_regular_file(ec)) files.push_back(entry.path().string());
    }
    if (ec) membersError(pattern, "cannot list the members' folder: " + ec.message());
  } else {
    glob_t found{};
    const int rc = ::glob(pattern.c_str(), 0, nullptr, &found);
    if (rc == 0)
      for (std::size_t k = 0; k < found.gl_pathc; ++k)
        if (fs::is_regular_file(found.gl_pathv[k], ec)) files.emplace_back(found.gl_pathv[k]);
    globfree(&found);
    if (rc != 0 && rc != GLOB_NOMATCH) membersError(pattern, "cannot read the folders the members' pattern names");
  }
  std::sort(files.begin(), files.end());
  if (files.empty())
    membersError(pattern, "no forcing file matches the members' folder or pattern (a folder of forcing files, or a "
                          "pattern such as 'members/*.csv' in quotes)");
  return files;
}

std::string memberName(const std::string& file) { return fs::path(file).stem().string(); }

Ensemble::Ensemble(const RouteRequest& request, Progress* progress, const std::vector<std::uint32_t>& opened)
    : request_(request) {
  Progress silent;
  Progress& tell = progress ? *progress : silent;
  const auto refuse = [&](const std::string& field, const std::string& message) {
    InputLocation at;
    at.field = field;
    throw InputError(at, message);
  };
  if (!request_.forcing.inflow.empty())
    refuse("inflow", "an ensemble's members replace the inflow file: give --members or --inflow, not both (a shared "
                     "--lateral is allowed)");
  if (!request_.gauges.observed.empty() || !request_.gauges.gauges.empty())
    refuse("observed", "gauges are not compared in an ensemble run: leave out --observed and --gauges");
  if (!request_.initial_state.empty() || !request_.outputs.state_nc.empty())
    refuse(request_.initial_state.empty() ? "save_state" : "initial_state",
           "saved states are not supported in an ensemble run: leave out --initial-state and --save-state");
  files_ = memberFiles(request_.members);
  std::map<std::string, std::string> by_name;
  for (const std::string& f : files_) {
    std::string name = memberName(f);
    if (const auto [it, fresh] = by_name.emplace(name, f); !fresh)
      membersError(f, fmt::format("member name {} is used twice (by {} and by {}): a member is named by its file's "
                                  "stem, which must be unique",
                                  name, it->second, f));
    names_.push_back(std::move(name));
  }
  const OutputRequest outputs = outputRequest();
  std::vector<io::NamedPath> inputs = inputPaths(request_, nullptr);
  for (const std::string& f : files_) inputs.push_back({"--members", f});
  io::refuseOutputOverInput(outputPaths(outputs), inputs);

  tell.stage("reading " + request_.network.path);
  net_ = loadNetwork(request_.network);
  inputs = inputPaths(request_, net_.get());
  for (const std::string& f : files_) inputs.push_back({"--members", f});
  io::refuseOutputOverInput(outputPaths(outputs), inputs);
  plan_ = routablePlan(*net_);

  std::vector<std::uint32_t> open = opened;
  if (open.empty())
    for (std::uint32_t m = 0; m < files_.size(); ++m) open.push_back(m);
  for (const std::uint32_t m : open)
    if (m >= files_.size())
      throw InvalidParameter("members", fmt::format("member {} asked for, but there are {}", m, files_.size()));
  tell.stage(fmt::format("reading the forcing of {} members", open.size()));
  forcing_.resize(files_.size());
  std::vector<routing::TimeAxis> own_axes;
  const RunForcing* first_opened = nullptr;
  for (const std::uint32_t m : open) {
    if (forcing_[m]) continue;  // named twice
    const std::string& f = files_[m];
    ForcingFiles ff = request_.forcing;
    ff.inflow = f;
    forcing_[m] = std::make_unique<RunForcing>(ff, plan_, net_->config.forcingUnits(), &net_->dropped_in_lake);
    if (!first_opened) first_opened = forcing_[m].get();
    // The member's own times: with a shared lateral file the run's axis
    // may come from that file, so the member is read alone for its axis.
    routing::TimeAxis a = forcing_[m]->axis();
    if (!request_.forcing.lateral.empty()) {
      io::CsvForcingOptions alone;
      alone.dt_s = ff.dt_s;
      alone.max_steps = ff.max_steps;
      alone.unit = net_->config.forcingUnits();
      a = io::openForcing(fs::path(f), std::nullopt, alone).source->axis();
    }
    own_axes.push_back(a);
    const routing::TimeAxis& first = own_axes.front();
    if (!sameAxis(a, first) || !sameAxis(forcing_[m]->axis(), first_opened->axis()))
      membersError(f, fmt::format("the member's time axis ({}) differs from that of the first member {} ({}): every "
                                  "member must give the same times",
                                  axisText(a), files_[open.front()], axisText(first)));
  }
  const std::size_t steps = axis().steps;
  requireHydrographRows(request_.outputs.hydrographs, plan_, steps * files_.size(), request_.max_hydrograph_rows);
  kept_ = chooseSeries(request_.outputs.hydrographs, plan_).mask(plan_.size());
  if (!request_.outputs.report_dir.empty()) {
    const report::ReportSeries wanted(plan_, axis(),
                                      namedReaches(request_.outputs.report_reaches, plan_, "report_reaches"));
    for (std::uint32_t i = 0; i < plan_.size(); ++i)
      if (wanted.wants(i)) kept_[i] = true;
  }
}

Ensemble::~Ensemble() = default;

const routing::TimeAxis& Ensemble::axis() const {
  for (const auto& f : forcing_)
    if (f) return f->axis();
  throw InternalError("Ensemble::axis: no member is opened");
}

const RunForcing& Ensemble::forcing(std::size_t m) const {
  if (!isOpened(m))
    throw InvalidParameter("members", fmt::format("member {} is not opened in this ensemble (Ensemble's `opened`)", m));
  return *forcing_[m];
}

OutputRequest Ensemble::outputRequest() const {
  OutputRequest o = request_.outputs;
  o.members = names_;
  return o;
}

std::vector<MemberResult> routeMembers(const Ensemble& e, std::span<const std::uint32_t> members, unsigned threads,
                                       ReferenceRun* reference, Progress* progress) {
  for (const std::uint32_t m : members)
    if (!e.isOpened(m))
      throw InvalidParameter("members", fmt::format("member {} of {} asked for, but its forcing is not opened", m,
                                                    e.size()));
  const LoadedNetwork& net = e.network();
  const network::NetworkPlan& plan = e.plan();
  const RouteRequest& request = e.request();
  const std::size_t steps = e.axis().steps;
  std::vector<MemberResult> out(members.size());
  std::atomic<std::size_t> done{0};
  std::mutex tell;
  const auto routeOne = [&](std::size_t k) {
    const std::uint32_t m = members[k];
    MemberResult& r = out[k];
    r.member = m;
    // Each member on one thread: members side by side use the cores
    // without the router's scheduling per reach.
    routing::NetworkRouteOptions ro =
        networkRouteOptions(net, plan, request.method, request.diffusion_below_ponce, request.grid_spread_budget, 1);
    std::vector<routing::LakeRouting> lake_routing;
    ro.lake_results = &lake_routing;
    Capture capture(e.keptSeries(), steps, r);
    routing::NetworkResults res = routing::routeNetwork(plan, e.axis(), e.forcing(m).provider(), ro, &capture);
    r.peak_q_m3s.resize(plan.size());
    r.peak_time_s.resize(plan.size());
    r.volume_out_m3.resize(plan.size());
    for (std::size_t i = 0; i < plan.size(); ++i) {
      r.peak_q_m3s[i] = res.reaches[i].peak_q_m3s;
      r.peak_time_s[i] = res.reaches[i].peak_time_s;
      r.volume_out_m3[i] = res.reaches[i].volume.outflow_m3;
    }
    r.warnings = e.forcing(m).warnings();
    r.warnings.insert(r.warnings.end(), res.warnings.begin(), res.warnings.end());
    if (m == 0 && reference) {
      reference->lakes.clear();
      for (std::size_t l = 0; l < ro.lakes.size(); ++l)
        reference->lakes.push_back({l, net.lakes->lakes[l].lake_id, ro.lakes[l].inflow_reaches,
                                    ro.lakes[l].outflow_reaches, ro.lakes[l].outflow_shares,
                                    std::move(lake_routing[l])});
      reference->results = std::move(res);
    }
    if (progress) {
      const std::size_t now = ++done;
      const std::lock_guard lock(tell);
      progress->routed(now, members.size());
    }
  };
  tbb::task_arena arena(static_cast<int>(memberThreads(threads)));
  arena.execute([&] {
    tbb::parallel_for(tbb::blocked_range<std::size_t>(0, members.size(), 1),
                      [&](const tbb::blocked_range<std::size_t>& range) {
                        for (std::size_t k = range.begin(); k != range.end(); ++k) routeOne(k);
                      });
  });
  return out;
}

std::vector<std::uint32_t> membersOfRank(std::size_t members, int rank, int ranks) {
  std::vector<std::uint32_t> mine;
  for (std::size_t m = static_cast<std::size_t>(rank); m < members; m += static_cast<std::size_t>(ranks))
    mine.push_back(static_cast<std::uint32_t>(m));
  return mine;
}

std::vector<std::uint32_t> membersOpenedOnRank(std::size_t members, const routing::Ranks& ranks) {
  std::vector<std::uint32_t> opened = membersOfRank(members, ranks.rank(), ranks.size());
  if (members > 0 && (opened.empty() || opened.front() != 0)) opened.insert(opened.begin(), 0);
  return opened;
}

std::vector<MemberResult> routeMembersAmongRanks(const Ensemble& e, routing::Ranks* ranks, unsigned threads,
                                                 ReferenceRun* reference, Progress* progress) {
  if (!ranks || ranks->size() <= 1) {
    std::vector<std::uint32_t> all(e.size());
    for (std::uint32_t m = 0; m < all.size(); ++m) all[m] = m;
    return routeMembers(e, all, threads, reference, progress);
  }
  if (threads == 0)  // the machine's cores shared among its ranks
    threads = static_cast<unsigned>(std::max(1, std::max(1, tbb::info::default_concurrency()) / ranks->onThisMachine()));
  const std::vector<std::uint32_t> mine = membersOfRank(e.size(), ranks->rank(), ranks->size());
  std::vector<MemberResult> routed;
  routing::onEveryRank(ranks, [&] {
    routed = routeMembers(e, mine, threads, ranks->rank() == 0 ? reference : nullptr, progress);
  });
  routing::ByteWriter w;
  if (ranks->rank() != 0) {
    for (const MemberResult& r : routed) {
      w.put(r.member);
      w.put(r.peak_q_m3s), w.put(r.peak_time_s), w.put(r.volume_out_m3), w.put(r.series_reaches);
      w.put(r.q_m3s), w.put(r.depth_m), w.put(r.velocity_ms);
      w.put(static_cast<std::uint64_t>(r.warnings.size()));
      for (const std::string& warning : r.warnings) w.put(warning);
    }
  }
  const std::vector<std::vector<std::byte>> all = ranks->gather(w.bytes);
  if (ranks->rank() != 0) return {};
  std::vector<MemberResult> out(e.size());
  for (MemberResult& r : routed) out.at(r.member) = std::move(r);
  for (std::size_t k = 1; k < all.size(); ++k) {
    routing::ByteReader in(all[k]);
    while (!in.done()) {
      MemberResult r;
      r.member = in.get<std::uint32_t>();
      r.peak_q_m3s = in.series(), r.peak_time_s = in.series(), r.volume_out_m3 = in.series();
      r.series_reaches = in.series<std::uint32_t>();
      r.q_m3s = in.series(), r.depth_m = in.series(), r.velocity_ms = in.series();
      const auto warnings = in.get<std::uint64_t>();
      for (std::uint64_t j = 0; j < warnings; ++j) r.warnings.push_back(in.text());
      if (r.member >= out.size()) throw InternalError("a rank sent the result of no member");
      out[r.member] = std::move(r);
    }
  }
  for (std::uint32_t m = 0; m < out.size(); ++m)
    if (out[m].member != m || out[m].peak_q_m3s.empty())
      throw InternalError("member " + std::to_string(m) + "'s result did not reach rank 0");
  return out;
}

unsigned memberThreads(unsigned threads) {
  const int cores = std::max(1, tbb::info::default_concurrency());
  return threads == 0 ? static_cast<unsigned>(cores)
                      : static_cast<unsigned>(std::max(1, std::min(static_cast<int>(std::min(threads, 1u << 20)), cores)));
}

io::EnsembleOutput combineMembers(const std::vector<MemberResult>& members, const std::vector<std::string>& names,
                                  std::size_t reaches) {
  if (members.size() != names.size()) throw InternalError("combineMembers: a result per member is needed");
  io::EnsembleOutput e;
  e.members = names;
  const std::size_t n = members.size();
  for (std::size_t m = 0; m < n; ++m)
    if (members[m].member != m || members[m].peak_q_m3s.size() != reaches || members[m].peak_time_s.size() != reaches ||
        members[m].volume_out_m3.size() != reaches)
      throw InternalError(fmt::format("combineMembers: result {} is not member {}'s for {} reaches", m, m, reaches));
  e.peak_q_m3s.resize(reaches);
  e.peak_time_s.resize(reaches);
  e.counted.resize(reaches);
  std::vector<double> q(n), t(n);
  for (std::size_t i = 0; i < reaches; ++i) {
    std::uint32_t counted = 0;
    for (std::size_t m = 0; m < n; ++m) {
      q[m] = members[m].peak_q_m3s[i];
      t[m] = members[m].peak_time_s[i];
      if (!std::isnan(q[m])) ++counted;
    }
    for (std::size_t p = 0; p < 3; ++p) {
      e.peak_q_m3s[i][p] = percentile(q, io::kEnsemblePercentiles[p]);
      e.peak_time_s[i][p] = percentile(t, io::kEnsemblePercentiles[p]);
    }
    e.counted[i] = counted;
  }
  e.member_peak_q_m3s.reserve(n * reaches);
  e.member_peak_time_s.reserve(n * reaches);
  e.member_volume_out_m3.reserve(n * reaches);
  for (const MemberResult& r : members) {
    e.member_peak_q_m3s.insert(e.member_peak_q_m3s.end(), r.peak_q_m3s.begin(), r.peak_q_m3s.end());
    e.member_peak_time_s.insert(e.member_peak_time_s.end(), r.peak_time_s.begin(), r.peak_time_s.end());
    e.member_volume_out_m3.insert(e.member_volume_out_m3.end(), r.volume_out_m3.begin(), r.volume_out_m3.end());
  }
  return e;
}

report::ReportEnsemble reportBands(const std::vector<MemberResult>& members, const std::vector<std::string>& names,
                                   const std::vector<std::uint32_t>& outlets, std::size_t steps) {
  report::ReportEnsemble out;
  out.members = members.size();
  if (!names.empty()) out.reference = names.front();
  if (members.empty()) return out;
  std::vector<double> at(members.size());
  for (const std::uint32_t o : outlets) {
    std::vector<std::size_t> position;  // of the outlet's series in each member
    for (const MemberResult& r : members) {
      const auto it = std::lower_bound(r.series_reaches.begin(), r.series_reaches.end(), o);
      if (it == r.series_reaches.end() || *it != o) break;
      position.push_back(static_cast<std::size_t>(it - r.series_reaches.begin()));
    }
    if (position.size() != members.size()) continue;  // not kept
    report::ReportEnsemble::Band band;
    band.reach = o;
    band.p10.resize(steps);
    band.p50.resize(steps);
    band.p90.resize(steps);
    for (std::size_t t = 0; t < steps; ++t) {
      for (std::size_t m = 0; m < members.size(); ++m) at[m] = members[m].q_m3s[position[m] * steps + t];
      band.p10[t] = percentile(at, 10);
      band.p50[t] = percentile(at, 50);
      band.p90[t] = percentile(at, 90);
    }
    out.bands.push_back(std::move(band));
  }
  return out;
}

std::unique_ptr<Outputs> openEnsembleOutputs(const Ensemble& e) {
  const RouteRequest& r = e.request();
  return std::make_unique<Outputs>(e.outputRequest(), e.network(), e.plan(), e.axis(),
                                   r.command_line.empty() ? std::string("reachwise library") : r.command_line,
                                   r.sinks);
}

EnsembleSummary writeEnsemble(const Ensemble& e, Outputs& outputs, std::vector<MemberResult> members,
                              ReferenceRun reference) {
  if (members.size() != e.size()) throw InternalError("writeEnsemble: a result per member is needed");
  if (reference.results.reaches.size() != e.plan().size())
    throw InternalError("writeEnsemble: the reference member's full results are missing");
  const std::size_t steps = e.axis().steps;
  routing::SeriesSink& sink = outputs.sink();
  for (std::size_t m = 0; m < members.size(); ++m) {
    const MemberResult& r = members[m];
    if (r.member != m) throw InternalError("writeEnsemble: the members' results are not in member order");
    outputs.beginMember(m);
    for (std::size_t k = 0; k < r.series_reaches.size(); ++k) {
      const std::uint32_t reach = r.series_reaches[k];
      if (!sink.wants(reach)) continue;
      const auto span = [&](const std::vector<double>& v) {
        return std::span<const double>(v.data() + k * steps, steps);
      };
      sink.write(reach, span(r.q_m3s), span(r.depth_m), span(r.velocity_ms));
    }
  }
  EnsembleSummary s;
  s.names = e.names();
  s.ensemble = combineMembers(members, e.names(), e.plan().size());
  report::ReportEnsemble bands;
  const bool report = !e.request().outputs.report_dir.empty();
  if (report)
    bands = reportBands(members, e.names(), report::ReportSeries(e.plan(), e.axis()).outlets(), steps);

  const LoadedNetwork& net = e.network();
  auto& warnings = reference.results.warnings;
  for (const auto& p : net.problems)
    if (p.severity == network::Severity::Warning)
      warnings.push_back(std::string(p.codeName()) + " " + p.reach_id + ": " + p.message);
  // The members' forcing and routing warnings, once each: the reference
  // member's as they are, another member's when the reference did not
  // have it (`ensemble_member NAME: ...`: the console groups them as one
  // kind). Taken from the results, so that the forcing of the members
  // need not be open where they are combined.
  std::set<std::string> seen(warnings.begin(), warnings.end());
  for (std::size_t m = 0; m < members.size(); ++m)
    for (const auto& w : members[m].warnings) {
      if (seen.contains(w)) continue;
      if (m == 0) seen.insert(w);
      warnings.push_back(m == 0 ? w : "ensemble_member " + e.names()[m] + ": " + w);
    }
  RouteRequest shown = e.request();
  s.info = runInfo(shown, reference.results);
  for (std::size_t m = 0; m < e.size(); ++m) s.info.inputs.push_back(e.files()[m]);
  s.info.units = outputs.units();
  s.info.members = e.names();
  markLakeNodes(reference.results, reference.lakes);
  const std::vector<io::LakeOutput> lakes = routedLakes(net, e.plan(), reference.lakes);
  outputs.commit(reference.results, s.info, lakes, {}, nullptr, &s.ensemble, report ? &bands : nullptr);
  s.gpkg = outputs.geopackage();
  s.notes = outputs.notes();
  s.reference = std::move(reference);
  return s;
}

EnsembleSummary routeEnsemble(const RouteRequest& request, Progress* progress) {
  Progress silent;
  Progress& tell = progress ? *progress : silent;
  routing::Ranks* const ranks = request.ranks && request.ranks->size() > 1 ? request.ranks : nullptr;
  const bool writes = !ranks || ranks->rank() == 0;
  std::unique_ptr<Ensemble> e;
  std::unique_ptr<Outputs> outputs;
  routing::onEveryRank(ranks, [&] {
    const std::vector<std::uint32_t> opened =
        ranks ? membersOpenedOnRank(memberFiles(request.members).size(), *ranks) : std::vector<std::uint32_t>{};
    e = std::make_unique<Ensemble>(request, &tell, opened);
    if (writes) outputs = openEnsembleOutputs(*e);
  });
  tell.stage(fmt::format("routing {} members", e->size()));
  ReferenceRun reference;
  const auto t0 = std::chrono::steady_clock::now();
  std::vector<MemberResult> members = routeMembersAmongRanks(*e, ranks, request.threads, &reference, &tell);
  const double routing_s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  tell.stage("writing the results");
  EnsembleSummary s;
  routing::onEveryRank(ranks, [&] {
    if (writes) s = writeEnsemble(*e, *outputs, std::move(members), std::move(reference));
  });
  s.routing_s = routing_s;
  s.threads = memberThreads(request.threads);
  s.source = std::move(e);
  return s;
}

}  // namespace reachwise::run
