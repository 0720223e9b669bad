// Forcing given for a line that topology from geometry cut into pieces:
// an inflow goes to the top piece, a lateral inflow is shared over the
// pieces by length, whatever the line's digitising direction; forcing for
// both the line and one of its pieces, and ids like pieces that do not
// exist, are errors that say how the line was cut.
#include "reachwise/run/Forcing.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <numeric>
#include <string>
#include <vector>

#include "reachwise/Error.hpp"
#include "reachwise/network/ReachGraph.hpp"
#include "reachwise/network/geos/GeometryTopology.hpp"
#include "support/Scratch.hpp"

namespace {

using namespace reachwise;
namespace fs = std::filesystem;

network::ReachRecord line(const std::string& id, std::vector<network::Point3> pts, double length_m) {
  network::ReachRecord r;
  r.id = id;
  r.line = std::move(pts);
  r.length_m = r.geometry_length_m = length_m;
  r.section.bottom_width_m = 10;
  r.section.manning_n = 0.035;
  r.section.bed_slope = 0.001;
  return r;
}

/// M flows from (0, 0) to (3000, 0) (Z falls from 100 to 70); T and U end
/// on it at x = 1000 and 1800, cutting it into three pieces. `reversed`:
/// M is digitised from its bottom end (elevation turns it back).
network::NetworkPlan cutPlan(bool reversed) {
  std::vector<network::Point3> main{{0, 0, 100}, {3000, 0, 70}};
  if (reversed) std::reverse(main.begin(), main.end());
  network::ReachTable t;
  t.reaches = {line("M", main, 3000), line("T", {{1000, 800, 120}, {1000, 0, 90}}, 800),
               line("U", {{1800, -600, 110}, {1800, 0, 82}}, 600)};
  network::geos::TopologyOptions opt;
  opt.orientation = network::geos::Orientation::Elevation;
  network::ProblemList problems;
  network::geos::buildTopologyFromGeometry(t, opt, problems);
  EXPECT_FALSE(network::hasErrors(problems));
  return network::ReachGraph(t).freeze();
}

using Series = std::map<std::string, std::vector<double>>;

/// Writes `series` in the long CSV form, hourly from 2026-05-01T00:00Z.
std::string writeCsv(const fs::path& path, const Series& series) {
  std::ofstream out(path);
  out << "reach_id,time,discharge\n";
  for (const auto& [id, q] : series)
    for (std::size_t k = 0; k < q.size(); ++k)
      out << id << ",2026-05-01T" << (k < 10 ? "0" : "") << k << ":00:00Z," << q[k] << "\n";
  return path.string();
}

const std::vector<double> kInflow{2, 10, 6, 3, 2};
const std::vector<double> kLateral{1, 4, 2.5, 1, 0.5};

double volume(const std::vector<double>& q, double dt_s) {
  return std::accumulate(q.begin(), q.end(), 0.0) * dt_s;
}

bool contains(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }

/// The message of the InputError RunForcing throws (empty when none).
std::string forcingError(const run::ForcingFiles& files, const network::NetworkPlan& plan) {
  try {
    run::RunForcing forcing(files, plan);
  } catch (const InputError& e) {
    return e.what();
  }
  return {};
}

}  // namespace

TEST(CutLineForcing, InflowGoesToTheTopPieceAndLateralIsSharedByLength) {
  for (const bool reversed : {false, true}) {
    SCOPED_TRACE(reversed ? "M digitised upstream" : "M digitised downstream");
    const network::NetworkPlan plan = cutPlan(reversed);
    const testsupport::TempDir tmp;
    const run::RunForcing forcing({writeCsv(tmp.path() / "inflow.csv", {{"M", kInflow}}),
                                   writeCsv(tmp.path() / "lateral.csv", {{"M", kLateral}}), std::nullopt},
                                  plan);
    const double dt = forcing.axis().dt_s;
    ASSERT_EQ(forcing.axis().steps, kInflow.size());
    std::vector<double> q(forcing.axis().steps);
    std::size_t pieces = 0;
    double shared = 0;
    for (std::uint32_t i = 0; i < plan.size(); ++i) {
      const std::string& id = plan.reach_id[i];
      const bool piece = plan.line_id[i] == "M";
      EXPECT_EQ(piece, id.rfind("M.", 0) == 0) << id;
      // The inflow enters where the flow enters M: the piece whose top is x = 0.
      const bool top = piece && plan.top[i].x == 0.0;
      EXPECT_EQ(top, id == "M.1") << id;
      EXPECT_EQ(forcing.provider().inflow(i, q), top) << id;
      if (top) {
        EXPECT_EQ(q, kInflow);
      }
      EXPECT_EQ(forcing.provider().lateral(i, q), piece) << id;
      if (!piece) continue;
      ++pieces;
      // Its share of the lateral volume is its share of M's 3000 m, from its end points.
      const double fraction = std::abs(plan.bottom[i].x - plan.top[i].x) / 3000.0;
      EXPECT_NEAR(volume(q, dt), fraction * volume(kLateral, dt), 1e-9 * volume(kLateral, dt)) << id;
      for (std::size_t k = 0; k < q.size(); ++k) EXPECT_NEAR(q[k], fraction * kLateral[k], 1e-12) << id;
      shared += volume(q, dt);
    }
    EXPECT_EQ(pieces, 3u);
    EXPECT_NEAR(shared, volume(kLateral, dt), 1e-9 * volume(kLateral, dt));  // nothing lost or made
    std::vector<std::string> notes;
    for (const auto& w : forcing.warnings())
      if (w.rfind("cut_line_forcing M: ", 0) == 0) notes.push_back(w);
    ASSERT_EQ(notes.size(), 2u);
    EXPECT_TRUE(contains(notes[0], "inflow given for M enters at its top piece M.1")) << notes[0];
    EXPECT_TRUE(contains(notes[1], "lateral inflow given for M is shared")) << notes[1];
    EXPECT_TRUE(contains(notes[1], "M.1 33.3 %, M.2 26.7 %, M.3 40 %")) << notes[1];
  }
}

TEST(CutLineForcing, ForcingForALineAndOneOfItsPiecesIsRefused) {
  const network::NetworkPlan plan = cutPlan(false);
  const testsupport::TempDir tmp;
  const std::string both = writeCsv(tmp.path() / "both.csv", {{"M", kInflow}, {"M.2", kInflow}});
  const std::string error = forcingError({both, "", std::nullopt}, plan);
  EXPECT_TRUE(contains(error, "inflow file " + both + ": M and its piece M.2")) << error;
  // Of different kinds they do not overlap: an inflow at the top of M and
  // a lateral inflow along its second piece.
  const std::string lateral = writeCsv(tmp.path() / "lateral.csv", {{"M.2", kLateral}});
  const std::string inflow = writeCsv(tmp.path() / "inflow.csv", {{"M", kInflow}});
  EXPECT_EQ(forcingError({inflow, lateral, std::nullopt}, plan), "");
}

TEST(CutLineForcing, AnUnknownIdLikeAPieceSaysHowTheLineWasCut) {
  const network::NetworkPlan plan = cutPlan(false);
  const testsupport::TempDir tmp;
  const std::string lateral = writeCsv(tmp.path() / "lateral.csv", {{"M.4", kLateral}, {"X", kLateral}});
  const std::string error = forcingError({"", lateral, std::nullopt}, plan);
  EXPECT_TRUE(contains(error, "2 reach ids are not in the network")) << error;
  EXPECT_TRUE(contains(error, ": M.4, X)")) << error;
  EXPECT_TRUE(contains(error, "reach M was cut into M.1, M.2, M.3 (give forcing for M or for a piece)")) << error;
  EXPECT_EQ(error.find("was cut"), error.rfind("was cut")) << error;  // X looks like no piece
}
