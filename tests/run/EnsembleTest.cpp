// Forecast ensembles (run::Ensemble, routeMembers, combineMembers,
// routeEnsemble): percentiles against hand-computed order statistics,
// members equal to a plain run, linearity of Muskingum routing, the thread
// count, and bad members refused without leaving outputs.
#include "reachwise/run/Ensemble.hpp"

#include <fmt/format.h>
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "io/NetworkFixtures.hpp"
#include "reachwise/Error.hpp"
#include "support/Cli.hpp"
#include "support/Members.hpp"
#include "support/Scratch.hpp"

using namespace reachwise;
namespace fs = std::filesystem;

namespace {

const std::string kSample = REACHWISE_SOURCE_DIR "/sample-network/";

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

/// Same bits (NaN equal to NaN): results must not depend on the thread count.
bool sameBits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() && (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

void copyAs(const std::string& from, const fs::path& to) {
  fs::create_directories(to.parent_path());
  fs::copy_file(from, to, fs::copy_options::overwrite_existing);
}

/// The sample network with the sample inflow as every member.
run::RouteRequest sampleEnsemble(const fs::path& members_dir, const std::vector<std::string>& names) {
  for (const auto& n : names) copyAs(kSample + "inflow.csv", members_dir / (n + ".csv"));
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.forcing.lateral = kSample + "lateral.csv";
  r.members = members_dir.string();
  r.threads = 1;
  return r;
}

std::vector<std::uint32_t> allMembers(const run::Ensemble& e) {
  std::vector<std::uint32_t> all(e.size());
  for (std::uint32_t m = 0; m < all.size(); ++m) all[m] = m;
  return all;
}

std::string errorOf(const std::function<void()>& f) {
  try {
    f();
  } catch (const std::exception& e) {
    return e.what();
  }
  return "(no error)";
}

}  // namespace

// Hyndman & Fan (1996), definition 7: with the sorted sample x_1..x_n,
// h = (n - 1) p + 1 and Q(p) = x_⌊h⌋ + (h - ⌊h⌋)(x_⌊h⌋+1 - x_⌊h⌋). The
// values below are worked by hand from that definition.
TEST(EnsemblePercentile, MatchesHyndmanFanDefinition7ByHand) {
  // {1, 2, 3, 4}, p = 0.25: h = 1.75, Q = 1 + 0.75 (2 - 1) = 1.75.
  EXPECT_DOUBLE_EQ(run::percentile({4, 1, 3, 2}, 25), 1.75);
  // {15, 20, 35, 40, 50}, p = 0.4: h = 2.6, Q = 20 + 0.6 (35 - 20) = 29.
  EXPECT_DOUBLE_EQ(run::percentile({50, 15, 40, 20, 35}, 40), 29.0);
  // {1, 2, 3}, p = 0.1: h = 1.2, Q = 1.2; p = 0.9: h = 2.8, Q = 2.8; p = 0.5: h = 2, x_2 = 2.
  EXPECT_DOUBLE_EQ(run::percentile({3, 1, 2}, 10), 1.2);
  EXPECT_DOUBLE_EQ(run::percentile({3, 1, 2}, 90), 2.8);
  EXPECT_DOUBLE_EQ(run::percentile({3, 1, 2}, 50), 2.0);
  // The ends are the sample's minimum and maximum; one value is itself.
  EXPECT_DOUBLE_EQ(run::percentile({7, -2, 5}, 0), -2.0);
  EXPECT_DOUBLE_EQ(run::percentile({7, -2, 5}, 100), 7.0);
  EXPECT_DOUBLE_EQ(run::percentile({4.5}, 90), 4.5);
  // NaN (a member without a peak) is left out; none left: NaN.
  EXPECT_DOUBLE_EQ(run::percentile({NAN, 3, 1, 2}, 90), 2.8);
  EXPECT_TRUE(std::isnan(run::percentile({NAN, NAN}, 50)));
  EXPECT_TRUE(std::isnan(run::percentile({}, 50)));
  EXPECT_THROW(run::percentile({1, 2}, 101), InvalidParameter);
}

TEST(EnsembleCombine, PercentilesPerReachAndMembersInOrder) {
  // Two reaches, four members; reach 1 has no peak in member 2.
  std::vector<run::MemberResult> m(4);
  const double q0[] = {4, 1, 3, 2}, q1[] = {10, 30, NAN, 20};
  for (std::uint32_t k = 0; k < 4; ++k) {
    m[k].member = k;
    m[k].peak_q_m3s = {q0[k], q1[k]};
    m[k].peak_time_s = {1000.0 * k, 0};
    m[k].volume_out_m3 = {1, 2};
  }
  const auto e = run::combineMembers(m, {"a", "b", "c", "d"}, 2);
  // Reach 0, {1, 2, 3, 4}: p10 h = 1.3 -> 1.3; p50 h = 2.5 -> 2.5; p90 h = 3.7 -> 3.7
  // (definition 7 by hand, h = (n - 1) p + 1).
  EXPECT_DOUBLE_EQ(e.peak_q_m3s[0][0], 1.3);
  EXPECT_DOUBLE_EQ(e.peak_q_m3s[0][1], 2.5);
  EXPECT_DOUBLE_EQ(e.peak_q_m3s[0][2], 3.7);
  // Times {0, 1000, 2000, 3000}: p90 h = 3.7 -> 2700.
  EXPECT_DOUBLE_EQ(e.peak_time_s[0][2], 2700.0);
  // Reach 1, {10, 20, 30} counted: p50 = 20, p10 h = 1.2 -> 12.
  EXPECT_EQ(e.counted[1], 3u);
  EXPECT_DOUBLE_EQ(e.peak_q_m3s[1][1], 20.0);
  EXPECT_DOUBLE_EQ(e.peak_q_m3s[1][0], 12.0);
  // Member-major per-member values.
  EXPECT_DOUBLE_EQ(e.member_peak_q_m3s[2 * 2 + 0], 3.0);
  // Out of member order: refused.
  std::swap(m[0], m[1]);
  EXPECT_THROW(run::combineMembers(m, {"a", "b", "c", "d"}, 2), InternalError);
}

// Three members that are each the plain run's forcing: every member's
// peaks are exactly the plain run's, and so are the percentiles (common
// practice: an ensemble of identical members has no spread).
TEST(Ensemble, IdenticalMembersGiveThePlainRunExactly) {
  testsupport::TempDir dir;
  run::RouteRequest plain;
  plain.network.path = kSample + "network.gpkg";
  plain.forcing.inflow = kSample + "inflow.csv";
  plain.forcing.lateral = kSample + "lateral.csv";
  plain.threads = 2;
  const run::RouteSummary single = run::route(plain);

  run::RouteRequest r = sampleEnsemble(dir.path() / "members", {"c", "a", "b"});
  r.outputs.csv_dir = (dir.path() / "csv").string();
  r.threads = 2;
  const run::EnsembleSummary s = run::routeEnsemble(r);
  ASSERT_EQ(s.names, (std::vector<std::string>{"a", "b", "c"}));  // sorted by file name
  const std::size_t n = single.plan.size();
  ASSERT_EQ(s.ensemble.peak_q_m3s.size(), n);
  for (std::size_t i = 0; i < n; ++i) {
    const auto& want = single.results.reaches[i];
    for (std::size_t m = 0; m < 3; ++m) {
      EXPECT_EQ(s.ensemble.member_peak_q_m3s[m * n + i], want.peak_q_m3s) << single.plan.reach_id[i];
      EXPECT_EQ(s.ensemble.member_peak_time_s[m * n + i], want.peak_time_s) << single.plan.reach_id[i];
      EXPECT_EQ(s.ensemble.member_volume_out_m3[m * n + i], want.volume.outflow_m3) << single.plan.reach_id[i];
    }
    for (std::size_t p = 0; p < 3; ++p) {
      EXPECT_EQ(s.ensemble.peak_q_m3s[i][p], want.peak_q_m3s) << single.plan.reach_id[i];
      EXPECT_EQ(s.ensemble.peak_time_s[i][p], want.peak_time_s) << single.plan.reach_id[i];
    }
    EXPECT_EQ(s.ensemble.counted[i], 3u);
    EXPECT_EQ(s.reference.results.reaches[i].peak_q_m3s, want.peak_q_m3s);
  }
  // The CSV tables: member_reaches has a row per member and reach, and the
  // values read back are the plain run's; run_info names the members.
  std::ifstream members_csv(dir.path() / "csv/member_reaches.csv");
  std::string line;
  std::getline(members_csv, line);
  EXPECT_EQ(line, "member,reach_id,peak_q,peak_time,volume_out_m3");
  std::map<std::string, double> peak_of;
  for (std::size_t i = 0; i < n; ++i) peak_of[single.plan.reach_id[i]] = single.results.reaches[i].peak_q_m3s;
  std::size_t rows = 0;
  while (std::getline(members_csv, line)) {
    std::stringstream cells(line);
    std::string member, reach, q;
    std::getline(cells, member, ',');
    std::getline(cells, reach, ',');
    std::getline(cells, q, ',');
    EXPECT_EQ(std::stod(q), peak_of.at(reach)) << line;  // written as the shortest exact text
    ++rows;
  }
  EXPECT_EQ(rows, 3 * n);
  std::ifstream info(dir.path() / "csv/run_info.csv");
  const std::string all((std::istreambuf_iterator<char>(info)), std::istreambuf_iterator<char>());
  EXPECT_TRUE(contains(all, "members,3\n") && contains(all, "member,a\n") && contains(all, "member,c\n")) << all;
  std::ifstream reaches(dir.path() / "csv/reaches.csv");
  std::getline(reaches, line);
  EXPECT_TRUE(contains(line, ",members,peak_q_p10,peak_q_p50,peak_q_p90,peak_time_p10,peak_time_p50,peak_time_p90,"))
      << line;
  std::ifstream hydrographs(dir.path() / "csv/hydrographs.csv");
  std::getline(hydrographs, line);
  EXPECT_EQ(line, "member,reach_id,time,q,depth,velocity");
}

// Muskingum routing with fixed K and X is linear in the inflow (the
// routing equation O2 = C0 I2 + C1 I1 + C2 O1 with constant coefficients,
// McCarthy 1938; the steady start O = I scales too): members that are the
// same forcing times 0.5, 1 and 2 give peaks times 0.5, 1 and 2 at the same
// times, and the percentiles follow definition 7 on {0.5, 1, 2} P.
TEST(Ensemble, ScaledMembersScaleThePeaksOnALinearMethod) {
  testsupport::TempDir dir;
  fixtures::Layer net;
  net.fields = fixtures::reachFields();
  net.fields.push_back({"muskingum_k_h", OFTReal});
  net.fields.push_back({"muskingum_x", OFTReal});
  net.features = {fixtures::reach("LINESTRING (500000 5000000, 510000 5000000)", "A", std::string("C")),
                  fixtures::reach("LINESTRING (510000 5010000, 510000 5000000)", "B", std::string("C")),
                  fixtures::reach("LINESTRING (510000 5000000, 520000 5000000)", "C", std::nullopt)};
  for (auto& f : net.features) {
    f.values.push_back("2");    // K = 2 h
    f.values.push_back("0.2");  // X: with a 1 h step every routing coefficient is positive (no clamping)
  }
  const std::string network = (dir.path() / "net.gpkg").string();
  fixtures::write(network, "GPKG", {net});
  const double scale[] = {0.5, 1.0, 2.0};
  for (int m = 0; m < 3; ++m) {
    std::ofstream csv(dir.path() / fmt::format("members/s{}.csv", m));
    if (!csv) {
      fs::create_directories(dir.path() / "members");
      csv.open(dir.path() / fmt::format("members/s{}.csv", m));
    }
    csv << "reach_id,time,discharge\n";
    for (int h = 0; h <= 48; ++h) {
      const double a = 5 + 60 * std::max(0.0, 1 - std::abs(h - 10) / 8.0);
      const double b = 3 + 25 * std::max(0.0, 1 - std::abs(h - 14) / 6.0);
      csv << fmt::format("A,2026-03-{:02d}T{:02d}:00:00Z,{}\n", 1 + h / 24, h % 24, scale[m] * a);
      csv << fmt::format("B,2026-03-{:02d}T{:02d}:00:00Z,{}\n", 1 + h / 24, h % 24, scale[m] * b);
    }
  }
  run::RouteRequest r;
  r.network.path = network;
  r.members = (dir.path() / "members/s*.csv").string();
  r.method = routing::Method::Muskingum;
  r.threads = 2;
  const run::Ensemble e(r);
  ASSERT_EQ(e.size(), 3u);
  const auto results = run::routeMembers(e, allMembers(e), 2);
  const auto out = run::combineMembers(results, e.names(), e.plan().size());
  for (std::size_t i = 0; i < e.plan().size(); ++i) {
    const double p = results[1].peak_q_m3s[i];
    ASSERT_GT(p, 0);
    for (int m = 0; m < 3; ++m) {
      // Relative 1e-12: the same arithmetic on scaled numbers, rounding only.
      EXPECT_NEAR(results[m].peak_q_m3s[i], scale[m] * p, 1e-12 * p) << e.plan().reach_id[i];
      EXPECT_NEAR(results[m].peak_time_s[i], results[1].peak_time_s[i], 1e-3) << e.plan().reach_id[i];
      EXPECT_NEAR(results[m].volume_out_m3[i], scale[m] * results[1].volume_out_m3[i],
                  1e-12 * results[1].volume_out_m3[i]);
    }
    // Sorted {0.5, 1, 2} P: p10 h = 1.2 -> 0.6 P, p50 = P, p90 h = 2.8 -> 1.8 P.
    EXPECT_NEAR(out.peak_q_m3s[i][0], 0.6 * p, 1e-12 * p);
    EXPECT_NEAR(out.peak_q_m3s[i][1], p, 1e-12 * p);
    EXPECT_NEAR(out.peak_q_m3s[i][2], 1.8 * p, 1e-12 * p);
  }
  // The confluence reach's peak is larger than either headwater's (a check
  // that the test routes a network, not one reach).
  EXPECT_GT(results[1].peak_q_m3s[e.plan().size() - 1], 0.0);
}

// The members' results do not depend on how many threads route them.
TEST(Ensemble, ThreadCountDoesNotChangeResults) {
  testsupport::TempDir dir;
  // Members differing from each other: the sample inflow scaled.
  testsupport::writeScaledMembers(dir.path() / "members", {0.7, 0.85, 1.0, 1.15, 1.3});
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.forcing.lateral = kSample + "lateral.csv";
  r.network.lakes = kSample + "lakes.gpkg";
  r.members = (dir.path() / "members").string();
  r.outputs.hydrographs = "all";
  const run::Ensemble e(r);
  const auto all = allMembers(e);
  run::ReferenceRun ref1, ref2;
  const auto one = run::routeMembers(e, all, 1, &ref1);
  const auto two = run::routeMembers(e, all, 2, &ref2);
  // A subset in another order gives the same members' results.
  const std::vector<std::uint32_t> some = {4, 1};
  const auto subset = run::routeMembers(e, some, 2);
  ASSERT_EQ(one.size(), 5u);
  for (std::size_t m = 0; m < one.size(); ++m) {
    EXPECT_TRUE(sameBits(one[m].peak_q_m3s, two[m].peak_q_m3s)) << m;
    EXPECT_TRUE(sameBits(one[m].peak_time_s, two[m].peak_time_s)) << m;
    EXPECT_TRUE(sameBits(one[m].q_m3s, two[m].q_m3s)) << m;
    EXPECT_TRUE(sameBits(one[m].depth_m, two[m].depth_m)) << m;
  }
  EXPECT_TRUE(sameBits(subset[0].q_m3s, one[4].q_m3s));
  EXPECT_TRUE(sameBits(subset[1].peak_q_m3s, one[1].peak_q_m3s));
  EXPECT_EQ(subset[0].member, 4u);
  // The members differ (the check above could not pass by routing one forcing).
  EXPECT_NE(one[0].peak_q_m3s.back(), one[4].peak_q_m3s.back());
  ASSERT_EQ(ref1.results.reaches.size(), e.plan().size());
  EXPECT_EQ(ref1.lakes.size(), ref2.lakes.size());
  EXPECT_FALSE(ref1.lakes.empty());
}

// A pattern matching nothing names the pattern.
TEST(EnsembleMembers, NoMatchNamesThePattern) {
  testsupport::TempDir dir;
  const std::string pattern = (dir.path() / "nothing-*.csv").string();
  const std::string e = errorOf([&] { (void)run::memberFiles(pattern); });
  EXPECT_TRUE(contains(e, pattern) && contains(e, "no forcing file matches")) << e;
  const std::string empty = errorOf([&] { (void)run::memberFiles(dir.path().string()); });
  EXPECT_TRUE(contains(empty, dir.path().string())) << empty;
}

TEST(EnsembleMembers, FolderListsFilesSortedWithoutHiddenOnes) {
  testsupport::TempDir dir;
  for (const char* n : {"b.csv", "a.nc", ".hidden.csv", "c.csv"}) std::ofstream(dir.path() / n) << "x";
  fs::create_directories(dir.path() / "sub.csv");
  const auto files = run::memberFiles(dir.path().string());
  ASSERT_EQ(files.size(), 3u);
  EXPECT_EQ(fs::path(files[0]).filename(), "a.nc");
  EXPECT_EQ(fs::path(files[2]).filename(), "c.csv");
  EXPECT_EQ(run::memberName(files[0]), "a");
  const auto globbed = run::memberFiles((dir.path() / "*.csv").string());
  ASSERT_EQ(globbed.size(), 2u);  // glob(3) leaves out the hidden file and the folder is not a file
}

namespace {

/// Bad members refused before anything is written: the error names `file`,
/// and none of the outputs exists afterwards.
void expectRefusedWithoutOutputs(run::RouteRequest r, const testsupport::TempDir& dir, const std::string& file,
                                 const std::string& what) {
  r.outputs.gpkg = (dir.path() / "out.gpkg").string();
  r.outputs.csv_dir = (dir.path() / "csv").string();
  r.outputs.report_dir = (dir.path() / "report").string();
  const std::string e = errorOf([&] { (void)run::routeEnsemble(r); });
  EXPECT_TRUE(contains(e, file) && contains(e, what)) << e;
  EXPECT_FALSE(fs::exists(dir.path() / "out.gpkg"));
  EXPECT_FALSE(fs::exists(dir.path() / "csv"));
  EXPECT_FALSE(fs::exists(dir.path() / "report"));
  for (const auto& entry : fs::directory_iterator(dir.path()))
    EXPECT_TRUE(entry.path().filename() == "members") << "left behind: " << entry.path();
}

}  // namespace

TEST(EnsembleMembers, MismatchedTimeAxisNamesTheFile) {
  testsupport::TempDir dir;
  run::RouteRequest r = sampleEnsemble(dir.path() / "members", {"a", "b"});
  // Member c starts one step later than a and b.
  std::ifstream in(kSample + "inflow.csv");
  std::ofstream out(dir.path() / "members/c.csv");
  std::string line;
  std::getline(in, line);
  out << line << '\n';
  std::getline(in, line);  // the first time left out
  while (std::getline(in, line)) out << line << '\n';
  out.close();
  expectRefusedWithoutOutputs(r, dir, (dir.path() / "members/c.csv").string(), "time axis");
}

TEST(EnsembleMembers, DuplicateNamesNameBothFiles) {
  testsupport::TempDir dir;
  run::RouteRequest r = sampleEnsemble(dir.path() / "members", {"m1", "m2"});
  copyAs(kSample + "inflow.csv", dir.path() / "members/m1.txt");
  expectRefusedWithoutOutputs(r, dir, (dir.path() / "members/m1.txt").string(), "used twice");
  EXPECT_TRUE(contains(errorOf([&] { (void)run::Ensemble(r); }), (dir.path() / "members/m1.csv").string()));
}

TEST(EnsembleMembers, OneBadFileNamesIt) {
  testsupport::TempDir dir;
  run::RouteRequest r = sampleEnsemble(dir.path() / "members", {"a", "b", "c"});
  // Member b names a reach the network does not have.
  std::ofstream(dir.path() / "members/b.csv") << "reach_id,time,discharge\nNOPE,2026-05-14T06:00:00+01:00,1\n"
                                                  "NOPE,2026-05-14T06:30:00+01:00,1\n";
  expectRefusedWithoutOutputs(r, dir, (dir.path() / "members/b.csv").string(), "NOPE");
}

TEST(EnsembleMembers, UnknownPatternLeavesNoOutputs) {
  testsupport::TempDir dir;
  fs::create_directories(dir.path() / "members");
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.members = (dir.path() / "members/*.nc").string();
  expectRefusedWithoutOutputs(r, dir, r.members, "no forcing file matches");
}

TEST(EnsembleMembers, InflowBesideMembersAndNetcdfSeriesAreRefused) {
  testsupport::TempDir dir;
  run::RouteRequest r = sampleEnsemble(dir.path() / "members", {"a"});
  r.forcing.inflow = kSample + "inflow.csv";
  EXPECT_TRUE(contains(errorOf([&] { (void)run::Ensemble(r); }), "--members or --inflow"));
  r.forcing.inflow.clear();
  r.outputs.series_nc = (dir.path() / "series.nc").string();
  EXPECT_TRUE(contains(errorOf([&] { (void)run::routeEnsemble(r); }), "leave out --series"));
  EXPECT_FALSE(fs::exists(dir.path() / "series.nc"));
  // route() leaves ensembles to routeEnsemble().
  EXPECT_THROW(run::route(r), InternalError);
}

// Members spread over processes (simulated here by two Ensembles in one
// process, each opening its share): each routes its subset, the plain
// results are gathered in member order and combined where the outputs
// are; the tables are the same as one process routing every member.
TEST(Ensemble, SubsetsRoutedApartCombineToTheWholeRun) {
  testsupport::TempDir dir;
  testsupport::writeScaledMembers(dir.path() / "members", {0.8, 1.0, 1.2});
  run::RouteRequest r;
  r.network.path = kSample + "network.gpkg";
  r.forcing.lateral = kSample + "lateral.csv";
  r.members = (dir.path() / "members").string();
  r.threads = 2;
  r.outputs.csv_dir = (dir.path() / "whole").string();
  const run::EnsembleSummary whole = run::routeEnsemble(r);

  r.outputs.csv_dir = (dir.path() / "parts").string();
  const run::Ensemble first(r, nullptr, {0, 1});   // where the outputs are written
  const run::Ensemble second(r, nullptr, {2});
  EXPECT_TRUE(first.isOpened(1));
  EXPECT_FALSE(first.isOpened(2));
  EXPECT_THROW((void)run::routeMembers(second, std::vector<std::uint32_t>{0}, 1), InvalidParameter);
  auto outputs = run::openEnsembleOutputs(first);
  run::ReferenceRun reference;
  std::vector<run::MemberResult> gathered = run::routeMembers(first, std::vector<std::uint32_t>{0, 1}, 1, &reference);
  std::vector<run::MemberResult> other = run::routeMembers(second, std::vector<std::uint32_t>{2}, 1);
  gathered.push_back(std::move(other.front()));
  const run::EnsembleSummary parts = run::writeEnsemble(first, *outputs, std::move(gathered), std::move(reference));
  EXPECT_TRUE(sameBits(parts.ensemble.member_peak_q_m3s, whole.ensemble.member_peak_q_m3s));
  EXPECT_TRUE(sameBits(parts.ensemble.member_peak_time_s, whole.ensemble.member_peak_time_s));
  for (std::size_t i = 0; i < whole.ensemble.peak_q_m3s.size(); ++i)
    for (std::size_t p = 0; p < 3; ++p) EXPECT_EQ(parts.ensemble.peak_q_m3s[i][p], whole.ensemble.peak_q_m3s[i][p]);
  for (const char* file : {"reaches.csv", "member_reaches.csv", "hydrographs.csv", "nodes.csv"})
    EXPECT_EQ(testsupport::slurp(dir.path() / "parts" / file), testsupport::slurp(dir.path() / "whole" / file)) << file;
}
