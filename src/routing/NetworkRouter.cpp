#include "reachwise/routing/NetworkRouter.hpp"

#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_for_each.h>
#include <tbb/info.h>
#include <tbb/global_control.h>
#include <tbb/task_arena.h>
#include <tbb/task_group.h>

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdio>
#include <deque>
#include <iterator>
#include <memory>
#include <mutex>
#include <string>

#include "reachwise/Error.hpp"
#include "ReadAhead.hpp"
#include "reachwise/routing/Peak.hpp"

namespace reachwise::routing {

bool MemoryForcing::inflow(std::uint32_t reach, std::span<double> out) const {
  if (reach >= inflow_m3s.size() || inflow_m3s[reach].empty()) return false;
  std::copy_n(inflow_m3s[reach].begin(), std::min(out.size(), inflow_m3s[reach].size()), out.begin());
  return true;
}

bool MemoryForcing::lateral(std::uint32_t reach, std::span<double> out) const {
  if (reach >= lateral_m3s.size() || lateral_m3s[reach].empty()) return false;
  std::copy_n(lateral_m3s[reach].begin(), std::min(out.size(), lateral_m3s[reach].size()), out.begin());
  return true;
}

namespace {

/// Volume balance of the whole network from its reaches' balances.
VolumeBalance networkVolumeBalance(const network::NetworkPlan& plan, const NetworkResults& results) {
  // In: the forcing's point and lateral inflow; out: the outlets. What
  // reaches hand on to each other cancels, except the hand-over volume.
  VolumeBalance b;
  for (std::uint32_t i = 0; i < plan.size(); ++i) {
    const VolumeBalance& v = results.reaches[i].volume;
    b.inflow_m3 += v.point_inflow_m3;
    b.lateral_m3 += v.lateral_m3;
    b.storage_change_m3 += v.storage_change_m3;
    b.handover_m3 += v.inflow_m3 - v.point_inflow_m3;  // arrived from upstream ...
    if (plan.isOutlet(i)) b.outflow_m3 += v.outflow_m3;
    else b.handover_m3 -= v.outflow_m3;  // ... less what was sent
    // The initial flow entering the network: each reach's initial top +
    // lateral inflow, less what arrived from upstream reaches, whose
    // initial outflow (a steady start) is their own initial inflow. What
    // remains is the outlets' share.
    if (plan.isOutlet(i)) b.base_m3 += v.base_m3;
  }
  const double entered = b.inflow_m3 + b.lateral_m3;
  b.error_pct = entered > 0 ? 100.0 * (entered - b.outflow_m3 - b.storage_change_m3) / entered : 0.0;
  b.event_error_pct = eventErrorPct(b);
  return b;
}

/// Sub-reaches × sub-steps × time steps, summed over the reaches.
double cellUpdates(const NetworkResults& results) {
  const double steps = results.axis.steps > 1 ? static_cast<double>(results.axis.steps - 1) : 0.0;
  double cells = 0;
  for (const auto& s : results.reaches)
    cells += static_cast<double>(s.numerics.subreaches) * s.numerics.substeps * steps;
  return cells;
}

struct Workspace {
  ReachRouter router;
  std::vector<double> inflow, lateral, point, depth, velocity;
};

double peakTime(const TimeAxis& axis, const Peak& p) { return axis.at(p.index); }

/// "1 reach", "3 reaches".
std::string reaches(std::size_t n) { return std::to_string(n) + (n == 1 ? " reach" : " reaches"); }

/// "+1.23 %": a signed percentage for a warning.
std::string percent(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%+.2f %%", v);
  return buf;
}

/// Message tags between ranks.
enum Tag : int {
  kOutflow = 1,  ///< a reach's outflow, for reaches below it (or a terminal lake at rank 0)
  kSeries = 2,   ///< a reach's outflow, depth and velocity, for rank 0's sink
  kFailed = 3,   ///< the sender failed: stop
};

class Scheduler {
public:
  Scheduler(const network::NetworkPlan& plan, const TimeAxis& axis, const ForcingProvider& forcing,
            const NetworkRouteOptions& options, SeriesSink* sink)
      : plan_(plan), axis_(axis), forcing_(forcing), options_(options), sink_(sink),
        n_(plan.size()), pending_(new std::atomic<std::uint32_t>[n_]),
        consumers_(new std::atomic<std::uint32_t>[n_]), outflow_(n_) {
    results_.axis = axis;
    results_.reaches.resize(n_);
    top_node_.resize(n_);
    for (std::size_t i = 0; i < n_; ++i) {
      pending_[i] = plan.up_offset[i + 1] - plan.up_offset[i];
      consumers_[i] = plan.down_offset[i + 1] - plan.down_offset[i];
    }
    if (options.final_states) options.final_states->assign(n_, ReachState{});  // one slot per reach, filled by its worker
    setUpLakes();
    if (options.distribution && options.distribution->ranks && options.distribution->ranks->size() > 1)
      setUpRanks(*options.distribution);
    tell_summaries_ = sink_ && !dist_ && sink_->wantsSummaries();
    // Lakes name the nodes they sit on after routing (run::markLakeNodes).
    if (tell_summaries_ && options.lakes.empty()) node_layout_ = nodeLayout();
  }

  NetworkResults run() {
    if (dist_) {
      routeAmongRanks();
      if (me_ != 0) return std::move(results_);
    } else {
      routeHere();
    }
    routeTerminalLakes();
    collectNodes();
    results_.peak_live_series = peak_live_;
    summariseWarnings();
    results_.volume = networkVolumeBalance(plan_, results_);
    addLakesToBalance();
    warnAboutHandover();
    results_.cell_updates = cellUpdates(results_);
    return std::move(results_);
  }

private:
  /// Every reach in this process, independent sub-trees on the workers.
  void routeHere() {
    std::vector<std::uint32_t> roots;
    for (std::uint32_t i = 0; i < n_; ++i)
      if (plan_.isHeadwater(i)) roots.push_back(i);
    // The headwaters are handed out in plan order, a few at a time (an
    // iterator that only goes forward: the threading library then takes
    // them in turn, instead of splitting the list among the threads), so
    // that reaches are routed about in routingOrder(), the order forcing is
    // read ahead in.
    struct InTurn {
      using iterator_category = std::forward_iterator_tag;
      using value_type = std::uint32_t;
      using difference_type = std::ptrdiff_t;
      using pointer = const std::uint32_t*;
      using reference = const std::uint32_t&;
      pointer at;
      reference operator*() const { return *at; }
      InTurn& operator++() { return ++at, *this; }
      InTurn operator++(int) { return InTurn{at++}; }
      bool operator==(const InTurn&) const = default;
    };
    const InTurn first{roots.data()}, last{roots.data() + roots.size()};
    auto body = [this](std::uint32_t i, tbb::feeder<std::uint32_t>& feeder) {
      routeOne(i);
      reportProgress();
      for (std::uint32_t k = plan_.down_offset[i]; k < plan_.down_offset[i + 1]; ++k) {
        const std::uint32_t d = plan_.down_reach[k];
        if (pending_[d].fetch_sub(1) == 1) feeder.add(d);
      }
    };
    if (options_.threads > 0) {
      // No more threads than the machine runs at once: the results do not
      // depend on the count, and the threading library warns (on stderr)
      // of a larger request, which it would not honour anyway.
      const int threads = std::min(static_cast<int>(std::min<unsigned>(options_.threads, 1u << 20)),
                                   tbb::info::default_concurrency());
      tbb::task_arena arena(std::max(threads, 1));
      results_.threads = static_cast<unsigned>(arena.max_concurrency());
      arena.execute([&] { tbb::parallel_for_each(first, last, body); });
    } else {
      results_.threads = static_cast<unsigned>(tbb::this_task_arena::max_concurrency());
      tbb::parallel_for_each(first, last, body);
    }
    if (error_) std::rethrow_exception(error_);
  }

  // ---- routing among ranks (NetworkRouteOptions::distribution) ----

  bool local(std::uint32_t i) const { return !dist_ || dist_->owner[i] == me_; }

  /// Consumers count local reaches only; the messages this rank waits for.
  void setUpRanks(const Distribution& d) {
    if (d.owner.size() != n_) throw InternalError("routing among ranks needs an owner for every reach");
    dist_ = &d;
    me_ = d.ranks->rank();
    for (std::uint32_t i = 0; i < n_; ++i) {
      if (d.owner[i] < 0 || d.owner[i] >= d.ranks->size()) throw InternalError("a reach's owner is no rank");
      if (local(i)) ++local_count_;
      std::uint32_t here = 0;
      for (std::uint32_t k = plan_.down_offset[i]; k < plan_.down_offset[i + 1]; ++k)
        here += local(plan_.down_reach[k]) ? 1 : 0;
      consumers_[i] = here;
    }
  }

  /// Rank 0's sink says which series it wants; every rank learns it.
  void shareWants(Ranks& ranks) {
    std::vector<std::byte> wants(n_, std::byte{0});
    if (me_ == 0 && sink_)
      for (std::uint32_t i = 0; i < n_; ++i) wants[i] = std::byte{sink_->wants(i) ? std::uint8_t{1} : std::uint8_t{0}};
    ranks.broadcast(wants);
    wanted_.assign(n_, false);
    for (std::uint32_t i = 0; i < n_; ++i) wanted_[i] = wants[i] != std::byte{0};
    for (std::uint32_t u = 0; u < n_; ++u) {
      if (local(u)) continue;
      bool below_here = false;
      for (std::uint32_t k = plan_.down_offset[u]; k < plan_.down_offset[u + 1]; ++k)
        below_here = below_here || local(plan_.down_reach[k]);
      expected_ += below_here ? 1 : 0;
      if (me_ == 0 && keptForLake(u)) ++expected_;
      if (me_ == 0 && wanted_[u]) ++expected_;
    }
  }

  bool keptForLake(std::uint32_t i) const { return i < keep_outflow_.size() && keep_outflow_[i]; }

  void queue(int to, int tag, std::vector<std::byte> data) {
    {
      std::lock_guard lock(outbox_mutex_);
      outbox_.push_back({to, tag, std::move(data)});
    }
    wake_.notify_one();
  }

  /// A routed reach's outflow to every other rank routing a reach below
  /// it (once per rank), and to rank 0 for a terminal lake there.
  void shipOutflow(std::uint32_t i, const std::vector<double>& q) {
    std::vector<int> told;
    for (std::uint32_t k = plan_.down_offset[i]; k < plan_.down_offset[i + 1]; ++k) {
      const int to = dist_->owner[plan_.down_reach[k]];
      if (to != me_ && std::find(told.begin(), told.end(), to) == told.end()) told.push_back(to);
    }
    if (me_ != 0 && keptForLake(i)) told.push_back(0);
    for (const int to : told) {
      ByteWriter p;
      p.put(i);
      p.put(std::span<const double>(q));
      queue(to, kOutflow, std::move(p.bytes));
    }
  }

  void spawn(std::uint32_t i) {
    ++in_flight_;
    tasks_.run([this, i] {
      routeOne(i);
      reportProgress();
      if (!failed_.load())
        for (std::uint32_t k = plan_.down_offset[i]; k < plan_.down_offset[i + 1]; ++k) {
          const std::uint32_t d = plan_.down_reach[k];
          if (local(d) && pending_[d].fetch_sub(1) == 1) spawn(d);
        }
      ++done_local_;
      --in_flight_;
      wake_.notify_one();
    });
  }

  /// A message from another rank (on the thread that talks to the ranks).
  void take(Ranks::Message& m, tbb::task_arena& arena) {
    if (m.tag == kFailed) {
      failed_ = true;
      return;
    }
    ByteReader in(m.data);
    const auto u = in.get<std::uint32_t>();
    if (u >= n_) throw InternalError("a message between ranks names no reach");
    ++received_;
    if (m.tag == kSeries) {
      const std::vector<double> q = in.series(), depth = in.series(), velocity = in.series();
      if (!sink_) throw InternalError("a series arrived for no sink");
      std::lock_guard lock(sink_mutex_);
      sink_->write(u, q, depth, velocity);
      return;
    }
    if (m.tag != kOutflow) throw InternalError("a message between ranks with an unknown tag");
    if (failed_.load()) return;
    outflow_[u] = std::make_unique<std::vector<double>>(in.series());
    notePeakLive(++live_);
    arena.execute([&] {
      for (std::uint32_t k = plan_.down_offset[u]; k < plan_.down_offset[u + 1]; ++k) {
        const std::uint32_t d = plan_.down_reach[k];
        if (local(d) && pending_[d].fetch_sub(1) == 1) spawn(d);
      }
    });
  }

  /// Routes this rank's reaches: workers route, this thread passes the
  /// messages (MPI's funneled level), until every rank is done; then rank
  /// 0 gathers the summaries, or every rank throws the first failure.
  void routeAmongRanks() {
    Ranks& ranks = *dist_->ranks;
    shareWants(ranks);
    const int cores = tbb::info::default_concurrency();
    const int threads = options_.threads > 0
                            ? std::min(static_cast<int>(std::min<unsigned>(options_.threads, 1u << 20)), cores)
                            : std::max(1, cores / std::max(1, ranks.onThisMachine()));
    // One more slot, kept for this thread, which only hands work in.
    tbb::global_control limit(tbb::global_control::max_allowed_parallelism, static_cast<std::size_t>(threads) + 1);
    tbb::task_arena arena(threads + 1, 1);
    results_.threads = static_cast<unsigned>(threads);
    arena.execute([&] {
      for (std::uint32_t i = 0; i < n_; ++i)
        if (local(i) && plan_.isHeadwater(i)) spawn(i);
    });
    bool told = false, waiting = false;
    // Between polls this thread sleeps until a worker wakes it, or 50 µs,
    // doubling to 1 ms while nothing happens (a missed wake costs that).
    auto pause = std::chrono::microseconds(50);
    for (;;) {
      bool busy = false;
      std::deque<Outgoing> out;
      {
        std::lock_guard lock(outbox_mutex_);
        out.swap(outbox_);
      }
      for (Outgoing& m : out) ranks.send(m.to, m.tag, std::move(m.data));
      busy = !out.empty();
      while (auto m = ranks.receive()) {
        busy = true;
        try {
          take(*m, arena);
        } catch (...) {
          fail(std::current_exception());
        }
      }
      if (!waiting) {
        const bool failed = failed_.load();
        if (failed && !told && ownError()) {
          for (int r = 0; r < ranks.size(); ++r)
            if (r != me_) ranks.send(r, kFailed, {});
          told = true;
        }
        // Idle first: with no task left, only this thread adds messages.
        const bool idle = in_flight_.load() == 0;
        bool empty;
        {
          std::lock_guard lock(outbox_mutex_);
          empty = outbox_.empty();
        }
        const bool finished = failed || (done_local_.load() == local_count_ && received_ == expected_);
        if (finished && idle && empty && ranks.allSent()) {
          ranks.enterBarrier();
          waiting = true;
        }
      }
      if (waiting && ranks.barrierPassed()) break;
      pause = busy ? std::chrono::microseconds(50) : std::min(pause * 2, std::chrono::microseconds(1000));
      std::unique_lock lock(wake_mutex_);
      wake_.wait_for(lock, pause);
    }
    arena.execute([&] { tasks_.wait(); });
    std::optional<Ranks::Failure> mine;
    if (error_) mine = failureOf(error_, me_);
    const std::optional<Ranks::Failure> first = ranks.firstFailure(mine);
    if (error_) std::rethrow_exception(error_);
    if (first) throwFailure(*first);
    gatherAtRankZero(ranks);
  }

  bool ownError() {
    std::lock_guard lock(error_mutex_);
    return error_ != nullptr;
  }

  void fail(std::exception_ptr e) {
    std::lock_guard lock(error_mutex_);
    if (!error_) error_ = std::move(e);
    failed_ = true;
  }

  /// Rank 0 takes every other rank's reach summaries, top-node peaks, end
  /// states and lakes, and the most series any rank held.
  void gatherAtRankZero(Ranks& ranks) {
    ByteWriter p;
    for (std::uint32_t i = 0; i < n_; ++i) {
      if (!local(i)) continue;
      p.put(i);
      p.put(results_.reaches[i]);
      p.put(top_node_[i]);
      if (options_.final_states) {
        const ReachState& st = (*options_.final_states)[i];
        p.put(st.method), p.put(st.subreaches), p.put(st.substeps), p.put(st.reference_q_m3s);
        p.put(st.table_min_q_m3s), p.put(st.table_max_q_m3s), p.put(st.table_nodes), p.put(st.storage_m3);
        p.put(std::span<const double>(st.q_m3s));
      }
    }
    p.put(std::uint32_t{UINT32_MAX});
    for (std::uint32_t l = 0; l < lake_volume_.size(); ++l) {
      if (!lake_volume_[l].routed) continue;
      p.put(l);
      p.put(lake_volume_[l]);
      if (options_.lake_results) {
        const LakeRouting& r = (*options_.lake_results)[l];
        const LevelPoolResult& x = r.result;
        p.put(std::span<const double>(r.inflow_m3s));
        p.put(std::span<const double>(x.outflow_m3s)), p.put(std::span<const double>(x.level_m));
        p.put(std::span<const double>(x.storage_m3));
        p.put(x.volume_in_m3), p.put(x.volume_out_m3), p.put(x.storage_change_m3), p.put(x.volume_error_m3);
        p.put(x.substeps), p.put(x.response_time_min_s), p.put(x.steps_refined), p.put(x.samples_above_table);
      }
    }
    p.put(std::uint32_t{UINT32_MAX});
    p.put(static_cast<std::uint64_t>(peak_live_.load()));
    const std::vector<std::vector<std::byte>> all = ranks.gather(p.bytes);
    for (std::size_t r = 1; r < all.size(); ++r) {
      ByteReader in(all[r]);
      for (auto i = in.get<std::uint32_t>(); i != UINT32_MAX; i = in.get<std::uint32_t>()) {
        if (i >= n_) throw InternalError("a rank's summary names no reach");
        results_.reaches[i] = in.get<ReachSummary>();
        top_node_[i] = in.get<Peak>();
        if (options_.final_states) {
          ReachState& st = (*options_.final_states)[i];
          st.method = in.get<Method>(), st.subreaches = in.get<std::uint32_t>(), st.substeps = in.get<std::uint32_t>();
          st.reference_q_m3s = in.get<double>(), st.table_min_q_m3s = in.get<double>();
          st.table_max_q_m3s = in.get<double>(), st.table_nodes = in.get<std::uint32_t>();
          st.storage_m3 = in.get<double>();
          st.q_m3s = in.series();
        }
      }
      for (auto l = in.get<std::uint32_t>(); l != UINT32_MAX; l = in.get<std::uint32_t>()) {
        if (l >= lake_volume_.size()) throw InternalError("a rank's summary names no lake");
        lake_volume_[l] = in.get<LakeVolumes>();
        if (options_.lake_results) {
          LakeRouting& r = (*options_.lake_results)[l];
          LevelPoolResult& x = r.result;
          r.routed = true;
          r.inflow_m3s = in.series();
          x.outflow_m3s = in.series(), x.level_m = in.series(), x.storage_m3 = in.series();
          x.volume_in_m3 = in.get<double>(), x.volume_out_m3 = in.get<double>();
          x.storage_change_m3 = in.get<double>(), x.volume_error_m3 = in.get<double>();
          x.substeps = in.get<std::size_t>(), x.response_time_min_s = in.get<double>();
          x.steps_refined = in.get<std::size_t>(), x.samples_above_table = in.get<std::size_t>();
        }
      }
      peak_live_ = std::max<std::size_t>(peak_live_.load(), in.get<std::uint64_t>());
      if (!in.done()) throw InternalError("a rank's summary is longer than expected");
    }
  }

  void notePeakLive(std::size_t live) {
    std::size_t seen = peak_live_.load();
    while (live > seen && !peak_live_.compare_exchange_weak(seen, live)) {
    }
  }

  void routeOne(std::uint32_t i) {
    if (failed_.load()) return;
    try {
      routeReach(i);
    } catch (...) {
      fail(std::current_exception());
    }
  }

  void routeReach(std::uint32_t i) {
    Workspace& ws = workspace_.local();
    const std::size_t steps = axis_.steps;
    InputLocation where;
    where.reach_id = plan_.reach_id[i];
    where.fid = plan_.fid[i];

    // Top inflow: upstream outflows (their shares) in plan order, then
    // point inflow; or, below a lake, the reach's share of its outflow.
    ws.inflow.assign(steps, 0.0);
    ws.point.assign(steps, 0.0);
    double point_m3 = 0;
    const bool has_point = forcing_.inflow(i, ws.point);
    if (has_point)  // trapezoids: the reach takes its top inflow as linear between samples
      for (std::size_t n = 1; n < steps; ++n) point_m3 += 0.5 * (ws.point[n - 1] + ws.point[n]) * axis_.dt_s;
    if (const std::int32_t l = lake_at_top_.empty() ? -1 : lake_at_top_[i]; l >= 0) {
      // The first outflowing reach to get here routes the lake, on
      // everything that reaches its node; the others wait for it.
      std::call_once(lake_once_[static_cast<std::size_t>(l)], [&] { routeLakeAtNode(static_cast<std::size_t>(l)); });
      const std::vector<double>& q = lake_out_[static_cast<std::size_t>(l)];
      const double share = share_at_top_[i];
      for (std::size_t n = 0; n < steps; ++n) ws.inflow[n] = share * q[n];
      for (std::uint32_t k = plan_.up_offset[i]; k < plan_.up_offset[i + 1]; ++k) release(plan_.up_reach[k]);
    } else {
      for (std::uint32_t k = plan_.up_offset[i]; k < plan_.up_offset[i + 1]; ++k) {
        const std::uint32_t u = plan_.up_reach[k];
        const double f = plan_.up_fraction[k];
        const std::vector<double>& q = *outflow_[u];
        for (std::size_t n = 0; n < steps; ++n) ws.inflow[n] += f * q[n];
        release(u);
      }
      if (has_point)
        for (std::size_t n = 0; n < steps; ++n) ws.inflow[n] += ws.point[n];
    }
    ws.lateral.assign(steps, 0.0);
    const bool has_lateral = forcing_.lateral(i, ws.lateral);
    const double base = i < options_.base_flow_m3s.size() ? options_.base_flow_m3s[i] : 0.0;
    if (base != 0)
      for (double& v : ws.lateral) v += base;

    ReachRun run;
    auto out = std::make_unique<std::vector<double>>();
    const bool send = dist_ ? bool(wanted_[i]) : sink_ && sink_->wants(i);
    try {
      const ReachSpec spec{plan_.section[i], plan_.length_m[i],
                           plan_.muskingum_k_s[i], plan_.muskingum_x[i]};
      const ReachState* start =
          options_.initial_states && i < options_.initial_states->size() ? &(*options_.initial_states)[i] : nullptr;
      run = ws.router.route(spec, ws.inflow,
                            (has_lateral || base != 0) ? std::span<const double>(ws.lateral)
                                                       : std::span<const double>(),
                            axis_.dt_s, options_.reach, *out, start);
      if (options_.final_states) (*options_.final_states)[i] = ws.router.endState(run);  // this reach's slot only
      const hydraulics::RatingTable* table = ws.router.lastTable() ? &*ws.router.lastTable() : nullptr;
      if (send) depthAndVelocity(spec.section, table, *out, ws.depth, ws.velocity);
      summarise(i, run, *out, spec.section, table);
      results_.reaches[i].volume.point_inflow_m3 = point_m3;
    } catch (const InvalidParameter& e) {
      where.field = e.quantity();
      throw InputError(where, e.what());
    }
    top_node_[i] = findPeak(ws.inflow);
    if (send && dist_ && me_ != 0) {
      ByteWriter p;
      p.put(i);
      p.put(std::span<const double>(*out)), p.put(std::span<const double>(ws.depth));
      p.put(std::span<const double>(ws.velocity));
      queue(0, kSeries, std::move(p.bytes));
    } else if (send || tell_summaries_) {
      std::lock_guard lock(sink_mutex_);
      if (send) sink_->write(i, *out, ws.depth, ws.velocity);
      if (tell_summaries_) sink_->summarised(i, results_.reaches[i]);
      if (!node_layout_.empty()) tellNodes(i);
    }
    if (dist_) {
      shipOutflow(i, *out);
      if (consumers_[i] == 0 && !(me_ == 0 && keptForLake(i))) return;  // nobody here needs it
    } else if (plan_.isOutlet(i) && !keptForLake(i)) {
      return;  // nobody downstream needs it
    }
    outflow_[i] = std::move(out);
    notePeakLive(++live_);
  }

  /// Checks the lakes against the plan and marks where each sits.
  void setUpLakes() {
    const auto& lakes = options_.lakes;
    if (options_.lake_results) options_.lake_results->assign(lakes.size(), LakeRouting{});
    if (lakes.empty()) return;
    lake_at_top_.assign(n_, -1);
    share_at_top_.assign(n_, 0.0);
    keep_outflow_.assign(n_, false);
    lake_once_.reset(new std::once_flag[lakes.size()]);
    lake_out_.resize(lakes.size());
    lake_volume_.assign(lakes.size(), LakeVolumes{});
    const auto bad = [](const std::string& why) { throw InvalidParameter("lakes", why); };
    const auto ups = [&](std::uint32_t i) {
      std::vector<std::uint32_t> u(plan_.up_reach.begin() + plan_.up_offset[i],
                                   plan_.up_reach.begin() + plan_.up_offset[i + 1]);
      std::sort(u.begin(), u.end());
      return u;
    };
    for (std::size_t l = 0; l < lakes.size(); ++l) {
      const NetworkLake& lake = lakes[l];
      if (!lake.pool) bad("lake " + std::to_string(l) + " has no level-pool lake");
      if (lake.outflow_shares.size() != lake.outflow_reaches.size())
        bad("lake " + std::to_string(l) + " needs one share per outflowing reach");
      double sum = 0;
      for (std::size_t k = 0; k < lake.outflow_reaches.size(); ++k) {
        const std::uint32_t o = lake.outflow_reaches[k];
        if (o >= n_) bad("lake " + std::to_string(l) + " names a reach outside the plan");
        if (lake_at_top_[o] >= 0) bad("reach " + plan_.reach_id[o] + " is the outflowing reach of two lakes");
        if (!(lake.outflow_shares[k] >= 0)) bad("a lake's share must be zero or positive");
        if (ups(o) != ups(lake.outflow_reaches.front()))
          bad("the outflowing reaches " + plan_.reach_id[lake.outflow_reaches.front()] + " and " + plan_.reach_id[o] +
              " of one lake have different upstream reaches");
        lake_at_top_[o] = static_cast<std::int32_t>(l);
        share_at_top_[o] = lake.outflow_shares[k];
        sum += lake.outflow_shares[k];
      }
      if (!lake.outflow_reaches.empty() && std::abs(sum - 1.0) > 1e-6)
        bad("the shares of a lake's outflowing reaches sum to " + std::to_string(sum) + ", not 1");
      // Shares summing to 1 to round-off: the outflowing reaches take the
      // whole of the lake's outflow.
      for (const std::uint32_t o : lake.outflow_reaches) share_at_top_[o] /= sum;
      if (lake.outflow_reaches.empty()) {
        terminal_.push_back(l);
        for (const std::uint32_t u : lake.inflow_reaches) {
          if (u >= n_ || !plan_.isOutlet(u)) bad("a terminal lake's inflowing reaches must be outlets of the plan");
          keep_outflow_[u] = true;
        }
      }
    }
  }

  /// Routes lake `l` (level pool) on `inflow`; `where` names it in errors.
  void routeLake(std::size_t l, std::vector<double> inflow, InputLocation where) {
    const NetworkLake& lake = options_.lakes[l];
    LevelPoolOptions lake_options;
    if (std::isfinite(lake.initial_level_m)) lake_options.initial_level_m = lake.initial_level_m;
    lake_options.initial_storage_m3 = lake.initial_storage_m3;
    lake_options.substeps = lake.substeps;
    try {
      LevelPoolResult r = lake.pool->route(inflow, axis_.dt_s, lake_options);
      lake_volume_[l] = {true, r.volume_in_m3, r.volume_out_m3, r.storage_change_m3};
      if (options_.lake_results) {
        LakeRouting& slot = (*options_.lake_results)[l];  // this lake's slot only
        slot.routed = true;
        slot.inflow_m3s = std::move(inflow);
        if (!lake.outflow_reaches.empty()) lake_out_[l] = r.outflow_m3s;
        slot.result = std::move(r);
      } else if (!lake.outflow_reaches.empty()) {
        lake_out_[l] = std::move(r.outflow_m3s);
      }
    } catch (const InvalidParameter& e) {
      where.field = e.quantity();
      throw InputError(where, e.what());
    }
  }

  /// A lake with outflowing reaches takes what the plan brings to all of
  /// their tops: upstream outflows (their fractions) and point inflows,
  /// summed in a fixed order (reach by reach, as listed), whichever thread
  /// does it.
  void routeLakeAtNode(std::size_t l) {
    const NetworkLake& lake = options_.lakes[l];
    const std::size_t steps = axis_.steps;
    std::vector<double> inflow(steps, 0.0), point(steps, 0.0);
    for (const std::uint32_t o : lake.outflow_reaches) {
      for (std::uint32_t k = plan_.up_offset[o]; k < plan_.up_offset[o + 1]; ++k) {
        const double f = plan_.up_fraction[k];
        const std::vector<double>& q = *outflow_[plan_.up_reach[k]];
        for (std::size_t n = 0; n < steps; ++n) inflow[n] += f * q[n];
      }
      std::fill(point.begin(), point.end(), 0.0);
      if (forcing_.inflow(o, point))
        for (std::size_t n = 0; n < steps; ++n) inflow[n] += point[n];
    }
    InputLocation where;
    where.reach_id = plan_.reach_id[lake.outflow_reaches.front()];
    where.fid = plan_.fid[lake.outflow_reaches.front()];
    routeLake(l, std::move(inflow), where);
  }

  /// A terminal lake takes its inflowing reaches' outflows once the whole
  /// network is routed.
  void routeTerminalLakes() {
    for (const std::size_t l : terminal_) {
      std::vector<double> inflow(axis_.steps, 0.0);
      for (const std::uint32_t u : options_.lakes[l].inflow_reaches) {
        if (!outflow_[u]) continue;  // listed twice
        const std::vector<double>& q = *outflow_[u];
        for (std::size_t n = 0; n < q.size(); ++n) inflow[n] += q[n];
      }
      routeLake(l, std::move(inflow), InputLocation{});
    }
    for (std::size_t i = 0; i < keep_outflow_.size(); ++i)
      if (keep_outflow_[i] && outflow_[i]) {
        outflow_[i].reset();
        --live_;
      }
  }

  /// A lake stores what arrived less what it let out: its storage change
  /// joins the network's. Below a lake with outflowing reaches the
  /// hand-over (top inflows less upstream outflows, where the lake's
  /// outflow now stands) is corrected by the same amount; what remains
  /// there is the lake's outflow volume over its sub-steps against the
  /// trapezoids of its outflow samples. What a terminal lake lets out
  /// leaves the network: it replaces its inflowing outlets' outflow in the
  /// network's outflow, and the difference between what they sent (over
  /// their sub-steps) and what the lake took (trapezoids of the samples)
  /// is hand-over.
  void addLakesToBalance() {
    if (options_.lakes.empty()) return;
    VolumeBalance& b = results_.volume;
    for (std::size_t l = 0; l < options_.lakes.size(); ++l) {
      const LakeVolumes& v = lake_volume_[l];
      if (!v.routed) continue;
      b.storage_change_m3 += v.storage_change_m3;
      if (!options_.lakes[l].outflow_reaches.empty()) {
        b.handover_m3 += v.storage_change_m3;
        continue;
      }
      double sent = 0;
      for (const std::uint32_t u : options_.lakes[l].inflow_reaches) sent += results_.reaches[u].volume.outflow_m3;
      b.outflow_m3 += v.out_m3 - sent;
      b.handover_m3 += v.in_m3 - sent;
    }
    const double entered = b.inflow_m3 + b.lateral_m3;
    b.error_pct = entered > 0 ? 100.0 * (entered - b.outflow_m3 - b.storage_change_m3) / entered : 0.0;
    b.event_error_pct = eventErrorPct(b);
  }

  void reportProgress() {
    if (!options_.progress) return;
    const std::size_t done = ++done_;
    const std::size_t total = dist_ ? local_count_ : n_;  // among ranks: this rank's reaches
    const std::size_t stride = std::max<std::size_t>(1, total / 200);
    if (done % stride != 0 && done != total) return;
    std::lock_guard lock(progress_mutex_);
    options_.progress(done, total);
  }

  void release(std::uint32_t u) {
    if (consumers_[u].fetch_sub(1) == 1) {
      outflow_[u].reset();
      --live_;
    }
  }

  void summarise(std::uint32_t i, const ReachRun& run, const std::vector<double>& q,
                 const hydraulics::Section& section, const hydraulics::RatingTable* table) {
    ReachSummary& s = results_.reaches[i];
    s.numerics = run.numerics;
    s.volume = run.volume;
    s.inflow_peak_m3s = run.inflow_peak_m3s;
    s.inflow_peak_time_s = axis_.at(run.inflow_peak_index);
    const Peak p = findPeak(q);
    s.peak_q_m3s = p.value;
    s.peak_time_s = peakTime(axis_, p);
    depthAndVelocityAt(section, table, p.value, s.peak_depth_m, s.peak_velocity_ms);
    if (run.inflow_peak_m3s > 0) {
      s.attenuation_pct = 100.0 * (run.inflow_peak_m3s - p.value) / run.inflow_peak_m3s;
      s.travel_time_s = s.peak_time_s - s.inflow_peak_time_s;
    }
  }

  bool bifurcates(std::uint32_t i) const { return plan_.down_offset[i + 1] - plan_.down_offset[i] > 1; }
  NodeSummary topNode(std::uint32_t i) const;
  /// A node at the bottom of reach i (`prefix` + its id), with its outflow peak.
  NodeSummary bottomNode(std::uint32_t i, const char* prefix, NodeKind kind) const;
  NodeSummary bifurcationNode(std::uint32_t i) const;
  /// Where reach i's nodes stand in NetworkResults::nodes (kNone: it has
  /// no such node), and the confluence branches listed before its top node.
  struct ReachNodes {
    static constexpr std::uint32_t kNone = ~0u;
    std::uint32_t top = kNone, bifurcation = kNone, outlet = kNone;
    std::uint32_t top_branches_before = 0, bifurcation_branches_before = 0, outlet_branches_before = 0;
  };
  std::vector<ReachNodes> nodeLayout() const;
  /// Calls take(position, branches before it, node) for each of reach i's nodes.
  template <class Take>
  void nodesOf(std::uint32_t i, const ReachNodes& at, Take&& take) const;
  /// Hands reach i's nodes, final once it is routed, to the sink.
  void tellNodes(std::uint32_t i);
  void collectNodes();
  void summariseWarnings();
  void warnAboutHandover();

  const network::NetworkPlan& plan_;
  const TimeAxis& axis_;
  const ForcingProvider& forcing_;
  const NetworkRouteOptions& options_;
  SeriesSink* sink_;
  /// The sink takes each summary as it is final (routing in one process only;
  /// among ranks it has them all at the end).
  bool tell_summaries_ = false;
  std::vector<ReachNodes> node_layout_;  ///< with tell_summaries_ and no lakes: the sink takes nodes too
  std::size_t n_;
  std::unique_ptr<std::atomic<std::uint32_t>[]> pending_, consumers_;
  std::vector<std::unique_ptr<std::vector<double>>> outflow_;
  std::vector<Peak> top_node_;
  // ---- lakes (empty without) ----
  struct LakeVolumes {
    bool routed = false;
    double in_m3 = 0, out_m3 = 0, storage_change_m3 = 0;
  };
  std::vector<std::int32_t> lake_at_top_;     ///< per reach: the lake whose outflow enters its top, or -1
  std::vector<double> share_at_top_;          ///< per reach: its share of that lake's outflow
  std::vector<bool> keep_outflow_;            ///< per reach: an outlet flowing into a terminal lake
  std::unique_ptr<std::once_flag[]> lake_once_;
  std::vector<std::vector<double>> lake_out_; ///< per lake: its outflow samples (lakes with outflowing reaches)
  std::vector<LakeVolumes> lake_volume_;
  std::vector<std::size_t> terminal_;         ///< terminal lakes
  // ---- routing among ranks (null dist_: this process routes everything) ----
  struct Outgoing {
    int to, tag;
    std::vector<std::byte> data;
  };
  const Distribution* dist_ = nullptr;
  int me_ = 0;
  std::size_t local_count_ = 0, expected_ = 0, received_ = 0;
  std::vector<bool> wanted_;                ///< per reach: rank 0's sink wants its series
  std::atomic<std::size_t> done_local_{0}, in_flight_{0};
  tbb::task_group tasks_;
  std::mutex outbox_mutex_, wake_mutex_;
  std::deque<Outgoing> outbox_;
  std::condition_variable wake_;
  tbb::enumerable_thread_specific<Workspace> workspace_;
  NetworkResults results_;
  std::atomic<std::size_t> live_{0}, peak_live_{0}, done_{0};
  std::atomic<bool> failed_{false};
  std::mutex error_mutex_, sink_mutex_, progress_mutex_;
  std::exception_ptr error_;
};

void Scheduler::warnAboutHandover() {
  // Above 0.1 % of the event the hand-over volume is worth a word: it
  // shrinks with the output step (--dt), as the sub-steps get fewer.
  const VolumeBalance& b = results_.volume;
  const double event = b.inflow_m3 + b.lateral_m3 - b.base_m3;
  if (!(event > 0) || !(std::abs(b.handover_m3) > 1e-3 * event)) return;
  char buf[160];
  std::snprintf(buf, sizeof buf, "%+.4g m3 (%+.2f %% of the event volume)", b.handover_m3,
                100.0 * b.handover_m3 / event);
  results_.warnings.push_back(
      std::string("hand-over between reaches ") + (b.handover_m3 > 0 ? "gained " : "lost ") + buf +
      ": a reach's outflow is passed on at the output steps only, and a hydrograph curved within a step "
      "arrives with a different volume; a shorter --dt reduces it (docs/methods.md, \"Volume balance\")");
}

NodeSummary Scheduler::topNode(std::uint32_t i) const {
  NodeSummary node;
  node.node_id = "N:" + plan_.reach_id[i];
  node.reach = i;
  node.x = plan_.top[i].x;
  node.y = plan_.top[i].y;
  node.peak_q_m3s = top_node_[i].value;
  node.peak_time_s = peakTime(axis_, top_node_[i]);
  const std::uint32_t ups = plan_.up_offset[i + 1] - plan_.up_offset[i];
  if (ups == 0) {
    node.kind = NodeKind::Headwater;
  } else if (ups == 1) {
    node.kind = NodeKind::Junction;
  } else {
    node.kind = plan_.isSideArmReturn(i) ? NodeKind::SideArmReturn : NodeKind::Confluence;
    double earliest = INFINITY, latest = -INFINITY, sum = 0;
    for (std::uint32_t k = plan_.up_offset[i]; k < plan_.up_offset[i + 1]; ++k) {
      const std::uint32_t u = plan_.up_reach[k];
      const ReachSummary& r = results_.reaches[u];
      ConfluenceBranch b{u, r.peak_q_m3s * plan_.up_fraction[k], r.peak_time_s};
      earliest = std::min(earliest, b.peak_time_s);
      latest = std::max(latest, b.peak_time_s);
      sum += b.peak_q_m3s;
      node.branches.push_back(b);
    }
    node.branch_spread_s = latest - earliest;
    node.coincidence_ratio = sum > 0 ? node.peak_q_m3s / sum : NAN;
  }
  return node;
}

NodeSummary Scheduler::bottomNode(std::uint32_t i, const char* prefix, NodeKind kind) const {
  NodeSummary node;
  node.node_id = prefix + plan_.reach_id[i];
  node.kind = kind;
  node.reach = i;
  node.x = plan_.bottom[i].x;
  node.y = plan_.bottom[i].y;
  node.peak_q_m3s = results_.reaches[i].peak_q_m3s;
  node.peak_time_s = results_.reaches[i].peak_time_s;
  return node;
}

NodeSummary Scheduler::bifurcationNode(std::uint32_t i) const {
  // At the downstream end of the reach that splits; its flow is that reach's outflow.
  NodeSummary node = bottomNode(i, "B:", NodeKind::Bifurcation);
  for (std::uint32_t k = plan_.down_offset[i]; k < plan_.down_offset[i + 1]; ++k) {
    const std::uint32_t d = plan_.down_reach[k];
    for (std::uint32_t j = plan_.up_offset[d]; j < plan_.up_offset[d + 1]; ++j)
      if (plan_.up_reach[j] == i) node.outgoing.push_back({d, plan_.up_fraction[j]});
  }
  // Largest share first (ties: by id), so that the listing does not depend on the plan order.
  std::sort(node.outgoing.begin(), node.outgoing.end(), [&](const BifurcationBranch& a, const BifurcationBranch& b) {
    return a.share != b.share ? a.share > b.share : plan_.reach_id[a.reach] < plan_.reach_id[b.reach];
  });
  return node;
}

std::vector<Scheduler::ReachNodes> Scheduler::nodeLayout() const {
  // A node at the top of every reach (headwater, confluence, side-arm
  // return, junction) except a branch of a bifurcation, one at the bottom of
  // every reach that splits (the bifurcation, listing its branches), in
  // plan order, then one below every outlet.
  std::vector<ReachNodes> layout(n_);
  std::uint32_t position = 0, branches = 0;
  for (std::uint32_t i = 0; i < n_; ++i) {
    const std::uint32_t ups = plan_.up_offset[i + 1] - plan_.up_offset[i];
    const bool branch = ups == 1 && bifurcates(plan_.up_reach[plan_.up_offset[i]]);
    if (!branch) {
      layout[i].top = position++;
      layout[i].top_branches_before = branches;
      if (ups >= 2) branches += ups;  // topNode(): a confluence lists every reach flowing in
    }
    if (bifurcates(i)) {
      layout[i].bifurcation = position++;
      layout[i].bifurcation_branches_before = branches;
    }
  }
  for (std::uint32_t i = 0; i < n_; ++i)
    if (plan_.isOutlet(i)) {
      layout[i].outlet = position++;
      layout[i].outlet_branches_before = branches;
    }
  return layout;
}

template <class Take>
void Scheduler::nodesOf(std::uint32_t i, const ReachNodes& at, Take&& take) const {
  if (at.top != ReachNodes::kNone) take(at.top, at.top_branches_before, topNode(i));
  if (at.bifurcation != ReachNodes::kNone) take(at.bifurcation, at.bifurcation_branches_before, bifurcationNode(i));
  if (at.outlet != ReachNodes::kNone) take(at.outlet, at.outlet_branches_before, bottomNode(i, "O:", NodeKind::Outlet));
}

void Scheduler::tellNodes(std::uint32_t i) {
  nodesOf(i, node_layout_[i], [this](std::size_t position, std::size_t branches_before, const NodeSummary& node) {
    sink_->nodeFinished(position, branches_before, node);
  });
}

void Scheduler::collectNodes() {
  const std::vector<ReachNodes> layout = node_layout_.empty() ? nodeLayout() : std::move(node_layout_);
  std::size_t count = 0;
  for (const ReachNodes& at : layout)
    count += (at.top != ReachNodes::kNone) + (at.bifurcation != ReachNodes::kNone) + (at.outlet != ReachNodes::kNone);
  results_.nodes.resize(count);
  for (std::uint32_t i = 0; i < n_; ++i)
    nodesOf(i, layout[i], [this](std::size_t position, std::size_t, NodeSummary&& node) {
      results_.nodes[position] = std::move(node);
    });
}

void Scheduler::summariseWarnings() {
  // One line per kind of event, with counts, not one per cell.
  std::uint64_t neg = 0, sur = 0;
  // X clamps by cause (XClampCause): cells and reaches.
  constexpr std::size_t kCauses = static_cast<std::size_t>(XClampCause::FlowRange) + 1;
  std::uint64_t xc[kCauses] = {};
  std::size_t xc_r[kCauses] = {};
  std::size_t neg_r = 0, sur_r = 0, comp_r = 0, vol_r = 0, vol_at = 0;
  double vol_worst = 0;
  std::uint64_t env = 0;
  std::size_t env_r = 0, env_at = 0;
  double env_worst = 0;
  std::size_t ponce_r = 0, ponce_at = 0;
  std::size_t apart_r = 0, apart_at = 0;
  for (std::size_t i = 0; i < results_.reaches.size(); ++i) {
    const ReachSummary& r = results_.reaches[i];
    const ReachNumerics& m = r.numerics;
    if (m.above_saved_flows && apart_r++ == 0) apart_at = i;
    if (m.negative_clamps) neg += m.negative_clamps, ++neg_r;
    if (m.x_clamps) {
      const auto c = static_cast<std::size_t>(m.x_clamp_cause);
      xc[c] += m.x_clamps, ++xc_r[c];
    }
    if (m.surcharge_cells) sur += m.surcharge_cells, ++sur_r;
    if (m.grid_compromise) ++comp_r;
    // Reaches a Cunge method routed although below the limit (NaN, no rise,
    // compares false); those `vpmc` handed to the diffusion wave are fine.
    if (m.ponce_number < kDiffusionWaveMinPonce && m.method != Method::DiffusionWave) {
      if (ponce_r == 0 || m.ponce_number < results_.reaches[ponce_at].numerics.ponce_number) ponce_at = i;
      ++ponce_r;
    }
    if (m.envelope_exceedances) {
      env += m.envelope_exceedances, ++env_r;
      if (m.envelope_excursion_pct > env_worst) env_worst = m.envelope_excursion_pct, env_at = i;
    }
    if (std::abs(r.volume.event_error_pct) > 1.0) {
      ++vol_r;
      if (std::abs(r.volume.event_error_pct) > std::abs(vol_worst)) {
        vol_worst = r.volume.event_error_pct;
        vol_at = i;
      }
    }
  }
  auto& w = results_.warnings;
  if (neg_r) w.push_back(std::to_string(neg) + " negative flows clamped to zero in " + reaches(neg_r));
  // D lowered to 1 + C (X raised to −C/2) routes with less diffusion than
  // physical; each cause in its own words.
  const char* const why[kCauses] = {
      "",
      "with a pipe in surcharge (above its capacity)",
      "of two-stage section whose flows cross bank-full (the celerity changes abruptly there)",
      "too short for the step (the wave crosses the reach within one time step)",
      "too flat for the grid (D > 1 + C at the reference flow: the reach is shorter than the diffusion "
      "length Q/(T S0 c) less the distance the wave moves in a step)",
      "at flows away from the reference flow (D > 1 + C there)"};
  for (std::size_t c = 1; c < kCauses; ++c)
    if (xc_r[c]) w.push_back(std::to_string(xc[c]) + " cells with less diffusion than the channel's (D lowered to 1 + C, X to -C/2) in " + reaches(xc_r[c]) + " " + why[c]);
  if (sur_r) w.push_back(std::to_string(sur) + " cells above pipe capacity (surcharge) in " + reaches(sur_r));
  if (comp_r) w.push_back(reaches(comp_r) + " where no grid kept every coefficient non-negative; the closest was used");
  if (env_r) {
    const std::string worst = percent(env_worst);
    w.push_back(reaches(env_r) + " leaving the inflow envelope (lowest to highest inflow) by more than 1 % of the rise (" +
                std::to_string(env) + " output samples), worst " + worst.substr(1) + " of the rise at reach " +
                plan_.reach_id[env_at]);
  }
  if (ponce_r) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%.1f", results_.reaches[ponce_at].numerics.ponce_number);
    w.push_back(reaches(ponce_r) + " too flat for the flood's rise time (Ponce number T S0 (g/d)^(1/2) below 30; lowest " +
                std::string(buf) + " at reach " + plan_.reach_id[ponce_at] +
                "): outside the range the Muskingum-Cunge methods are checked for; on such reaches their peak can be "
                "tens of percent off and hours late (docs/methods.md, \"Where the diffusion wave fails\"); vpmc "
                "routes them with the diffusion wave unless told not to");
  }
  if (apart_r)
    w.push_back(reaches(apart_r) + " (e.g. " + plan_.reach_id[apart_at] +
                ") continue a saved state and carry flows above any the saving run saw (above twice its reference "
                "flow): they keep the saved grid and parameters, chosen for lower flows, so the run agrees less "
                "closely with one unbroken run (docs/formats.md, \"Saved state\")");
  if (vol_r)
    w.push_back(reaches(vol_r) + " with a volume error above 1 % of the event volume (what entered above the initial flow), worst " +
                percent(vol_worst) + " at reach " + plan_.reach_id[vol_at]);
}

}  // namespace

NetworkResults routeNetwork(const network::NetworkPlan& plan, const TimeAxis& axis,
                            const ForcingProvider& forcing, const NetworkRouteOptions& options,
                            SeriesSink* sink) {
  if (axis.steps < 2) throw InvalidParameter("steps", "a run needs at least two time steps");
  REACHWISE_ASSERT(plan.up_offset.size() == plan.size() + 1);
  REACHWISE_ASSERT(plan.down_offset.size() == plan.size() + 1);
  const ForcingProvider::ReadsOnDemand slow = forcing.readsOnDemand();
  if (!slow.inflow && !slow.lateral) return Scheduler(plan, axis, forcing, options, sink).run();
  // Forcing read from a file while routing: read ahead, in the order the
  // reaches this process routes are expected to be routed.
  std::vector<bool> mine(plan.size(), true);
  if (const Distribution* d = options.distribution; d && d->ranks && d->ranks->size() > 1 && d->owner.size() == plan.size())
    for (std::size_t i = 0; i < plan.size(); ++i) mine[i] = d->owner[i] == d->ranks->rank();
  const ForcingReadAhead ahead(forcing, routingOrder(plan, mine), axis.steps);
  NetworkResults results = Scheduler(plan, axis, ahead, options, sink).run();
  const ForcingReadAhead::Counts counts = ahead.counts();
  results.series_read_ahead = counts.ahead;
  results.series_read_on_demand = counts.on_demand;
  return results;
}

}  // namespace reachwise::routing
