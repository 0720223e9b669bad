// The [network] table of a TOML run file.
#include "reachwise/io/NetworkConfig.hpp"

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

using namespace reachwise;
using io::NetworkConfig;

namespace {

/// Parsing `text` fails with an InputError naming bad.toml and `key`.
void fails_at(const std::string& text, const std::string& key) {
  try {
    NetworkConfig::fromString(text, "bad.toml");
    ADD_FAILURE() << "no error for: " << text;
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "bad.toml");
    EXPECT_EQ(e.where().field, key) << e.what();
  }
}

}  // namespace

TEST(NetworkConfig, DefaultsUseTheDocumentedFieldNames) {
  const NetworkConfig cfg;
  for (auto name : io::kFieldNames) EXPECT_EQ(cfg.field(name).name, name);
  EXPECT_EQ(cfg.units, units::System::SI);
  EXPECT_EQ(cfg.topology, io::TopologySource::Auto);
  EXPECT_DOUBLE_EQ(cfg.snap_tolerance_m, 5.0);  // metres, the documented default
  EXPECT_FALSE(cfg.gap_search_m.has_value());    // 10 x the tolerance
  EXPECT_EQ(cfg.splits.fallback, network::DefaultSplit::Width);  // the documented default
  EXPECT_TRUE(cfg.splits.overrides.empty());
  EXPECT_THROW(cfg.field("colour"), InternalError);
}

TEST(NetworkConfig, ParsesMappingsDefaultsAndSettings) {
  const auto cfg = NetworkConfig::fromString(R"(
[network]
layer = "streams"
units = "us"
length_unit = "us_ft"
topology = "geometry"
snap_tolerance_m = 1.5
gap_search_m = 40
orientation = "outlets"
outlets = ["R1", 77]

[network.fields]
reach_id = "CODE"
manning_n = { name = "N_MAIN", default = 0.04 }
side_slope = { default = 2 }
shape = { default = "circle" }

[routing]
method = "vpmc"   # other tables belong to other parts of the program
)",
                                             "run.toml");
  EXPECT_EQ(cfg.layer, "streams");
  EXPECT_EQ(cfg.units, units::System::USCustomary);
  EXPECT_EQ(cfg.forcingUnits(), units::System::USCustomary);  // follows units when not set
  // US survey foot = 1200/3937 m (its definition).
  EXPECT_DOUBLE_EQ(*cfg.length_unit_m, 1200.0 / 3937.0);
  EXPECT_EQ(cfg.topology, io::TopologySource::Geometry);
  EXPECT_DOUBLE_EQ(cfg.snap_tolerance_m, 1.5);
  EXPECT_DOUBLE_EQ(*cfg.gap_search_m, 40.0);
  EXPECT_EQ(cfg.orientation, io::Orientation::Outlets);
  ASSERT_EQ(cfg.outlets.size(), 2u);
  EXPECT_EQ(cfg.outlets[1], "77");
  EXPECT_EQ(cfg.field("reach_id").name, "CODE");
  EXPECT_EQ(cfg.field("manning_n").name, "N_MAIN");
  EXPECT_DOUBLE_EQ(*cfg.field("manning_n").default_number, 0.04);
  EXPECT_EQ(cfg.field("side_slope").name, "side_slope");  // default kept
  EXPECT_DOUBLE_EQ(*cfg.field("side_slope").default_number, 2.0);
  EXPECT_EQ(*cfg.field("shape").default_text, "circle");
}

TEST(NetworkConfig, ForcingUnitsStandApartFromTheNetworks) {
  const auto cfg = NetworkConfig::fromString("[network]\nunits = \"si\"\nforcing_units = \"us\"\n", "run.toml");
  EXPECT_EQ(cfg.units, units::System::SI);
  EXPECT_EQ(cfg.forcingUnits(), units::System::USCustomary);
}

TEST(NetworkConfig, MistakesAreInputErrorsNamingTheKey) {
  fails_at("[network]\nforcing_units = \"cfs\"\n", "network.forcing_units");
  fails_at("[network]\nunits = \"imperial\"\n", "network.units");
  fails_at("[network]\nsnap_tolrance = 1\n", "network.snap_tolrance");
  fails_at("[network]\nsnap_tolerance = 0.5\n", "network.snap_tolerance");  // replaced key
  fails_at("[network]\nsnap_tolerance_m = -1\n", "network.snap_tolerance_m");
  fails_at("[network]\nsnap_tolerance_m = \"big\"\n", "network.snap_tolerance_m");
  fails_at("[network]\ngap_search_m = -3\n", "network.gap_search_m");
  fails_at("[network]\nlength_unit = \"furlong\"\n", "network.length_unit");
  fails_at("[network]\ntopology = \"magic\"\n", "network.topology");
  fails_at("[network]\norientation = \"north\"\n", "network.orientation");
  fails_at("[network]\noutlets = \"R1\"\n", "network.outlets");
  fails_at("[network.fields]\ncolour = \"C\"\n", "network.fields.colour");
  fails_at("[network.fields]\nslope = { nme = \"S\" }\n", "network.fields.slope.nme");
  fails_at("[network.fields]\nslope = 3\n", "network.fields.slope");
  // Named outlets orient the lines: refused with a fixed orientation.
  fails_at("[network]\norientation = \"digitised\"\noutlets = [\"R1\"]\n", "network.outlets");
  fails_at("[network]\nconnect = \"R1\"\n", "network.connect");
  fails_at("[[network.connect]]\nto = \"R2\"\n", "network.connect[1].from");
  fails_at("[[network.connect]]\nfrom = \"R1\"\n", "network.connect[1].to");
  fails_at("[[network.connect]]\nfrom = \"R1\"\nto = [1, 2, 3]\n", "network.connect[1].to");
  fails_at("[[network.connect]]\nfrom = \"R1\"\nto = \"R1\"\n", "network.connect[1].to");
  fails_at("[[network.connect]]\nfrom = \"R1\"\nto = \"R2\"\n[[network.connect]]\nfrom = "
           "\"R3\"\nto = \"R2\"\nvia = 1\n",
           "network.connect[2].via");
}

TEST(NetworkConfig, ConnectionsNameAReachOrAPoint) {
  const auto cfg = NetworkConfig::fromString(R"(
[[network.connect]]
from = "trib"
to = "main"

[[network.connect]]
from = 12
to = [5000.5, -20]
)",
                                             "run.toml");
  ASSERT_EQ(cfg.connections.size(), 2u);
  EXPECT_EQ(cfg.connections[0].from, "trib");
  EXPECT_EQ(cfg.connections[0].to_reach, "main");
  EXPECT_FALSE(cfg.connections[0].to_point.has_value());
  EXPECT_EQ(cfg.connections[1].from, "12");
  ASSERT_TRUE(cfg.connections[1].to_point.has_value());
  EXPECT_DOUBLE_EQ(cfg.connections[1].to_point->x, 5000.5);
  EXPECT_DOUBLE_EQ(cfg.connections[1].to_point->y, -20.0);
}

TEST(NetworkConfig, ParsesDefaultSplitAndSplitTables) {
  const auto cfg = NetworkConfig::fromString(R"(
[network]
default_split = "equal"

[[network.split]]
at = "R7"
shares = { R8 = 0.7, "R9" = 0.3 }

[[network.split]]
at = 12
shares = { "12.1" = 0.25, 13 = 0.75 }
)",
                                             "run.toml");
  EXPECT_EQ(cfg.splits.fallback, network::DefaultSplit::Equal);
  EXPECT_EQ(cfg.splits.origin, "run.toml");
  ASSERT_EQ(cfg.splits.overrides.size(), 2u);
  const auto& first = cfg.splits.overrides[0];
  EXPECT_EQ(first.at, "R7");
  EXPECT_EQ(first.key, "network.split[1]");
  ASSERT_EQ(first.shares.size(), 2u);
  EXPECT_EQ(first.shares[0].first, "R8");
  EXPECT_DOUBLE_EQ(first.shares[0].second, 0.7);
  EXPECT_EQ(first.shares[1].first, "R9");
  const auto& second = cfg.splits.overrides[1];
  EXPECT_EQ(second.at, "12");  // an integer id, as text
  EXPECT_EQ(second.key, "network.split[2]");
  ASSERT_EQ(second.shares.size(), 2u);
  EXPECT_EQ(second.shares[0].first, "12.1");
  EXPECT_EQ(second.shares[1].first, "13");
  EXPECT_DOUBLE_EQ(second.shares[1].second, 0.75);
  for (const char* rule : {"width", "none"})
    EXPECT_EQ(network::defaultSplitName(
                  NetworkConfig::fromString(std::string("[network]\ndefault_split = \"") + rule + "\"\n", "r.toml")
                      .splits.fallback),
              std::string(rule));
}

TEST(NetworkConfig, SplitTableMistakesNameTheKey) {
  fails_at("[network]\ndefault_split = \"wide\"\n", "network.default_split");
  fails_at("[network]\nsplit = 0.5\n", "network.split");
  fails_at("[[network.split]]\nshares = { A = 1 }\n", "network.split[1].at");
  fails_at("[[network.split]]\nat = \"A\"\n", "network.split[1].shares");
  fails_at("[[network.split]]\nat = \"A\"\nshares = 1\n", "network.split[1].shares");
  fails_at("[[network.split]]\nat = \"A\"\nshares = { B = \"most\" }\n", "network.split[1].shares.B");
  fails_at("[[network.split]]\nat = \"A\"\nshares = { B = 1 }\n[[network.split]]\nat = \"C\"\nfrom = 2\n",
           "network.split[2].from");
  fails_at("[[network.split]]\nat = 1.5\nshares = { B = 1 }\n", "network.split[1].at");
}

TEST(NetworkConfig, SyntaxErrorGivesTheLine) {
  try {
    NetworkConfig::fromString("[network]\nlayer = \"a\"\nunits = = \"si\"\n", "broken.toml");
    FAIL() << "expected InputError";
  } catch (const InputError& e) {
    ASSERT_TRUE(e.where().line.has_value());
    EXPECT_EQ(*e.where().line, 3);
  }
  EXPECT_THROW(NetworkConfig::fromFile("/nonexistent/run.toml"), InputError);
}
