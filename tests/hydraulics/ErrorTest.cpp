#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

using reachwise::InputError;
using reachwise::InputLocation;

TEST(InputError, MessageNamesFileFeatureAndField) {
  InputLocation at;
  at.file = "rivers.gpkg";
  at.fid = 17;
  at.field = "slope";
  const InputError e(at, "must be > 0");
  EXPECT_EQ(std::string(e.what()), "rivers.gpkg, feature 17, field slope: must be > 0");
  EXPECT_EQ(e.plainMessage(), "must be > 0");
}

TEST(InputError, EmptyLocationKeepsMessage) {
  const InputError e(InputLocation{}, "nothing");
  EXPECT_EQ(std::string(e.what()), "nothing");
}
