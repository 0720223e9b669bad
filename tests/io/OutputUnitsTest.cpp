// The output units: the CF `units` texts are checked with UDUNITS-2 (the
// unit library CF names, Debian libudunits2-dev, a reference outside the
// project): each parses, the US customary one is convertible to the SI one,
// and UDUNITS' own factor turns a value written in US customary units back
// into the SI value; the foot is 0.3048 m exactly (NIST Handbook 44,
// Appendix C, the international foot of 1959). Field names and titles
// follow the units.
#include <gtest/gtest.h>
#include <udunits2.h>

#include <cmath>
#include <memory>
#include <string>

#include "reachwise/io/DataColumns.hpp"
#include "reachwise/io/OutputUnits.hpp"

namespace io = reachwise::io;
using reachwise::units::System;

namespace {

struct UnitSystemDeleter {
  void operator()(ut_system* s) const { ut_free_system(s); }
};
struct UnitDeleter {
  void operator()(ut_unit* u) const { ut_free(u); }
};
using Unit = std::unique_ptr<ut_unit, UnitDeleter>;

const io::Quantity kQuantities[] = {io::Quantity::Discharge, io::Quantity::Volume, io::Quantity::Length,
                                    io::Quantity::Velocity};

class Udunits : public ::testing::Test {
protected:
  void SetUp() override {
    ut_set_error_message_handler(ut_ignore);  // the database's own notes on stderr
    system_.reset(ut_read_xml(nullptr));
    ASSERT_TRUE(system_) << "UDUNITS-2 cannot read its unit database (status " << ut_get_status() << ")";
  }
  Unit parse(std::string_view text) {
    return Unit(ut_parse(system_.get(), std::string(text).c_str(), UT_ASCII));
  }
  std::unique_ptr<ut_system, UnitSystemDeleter> system_;
};

}  // namespace

TEST_F(Udunits, EveryUnitsTextParsesAndTheUsCustomaryValueConvertsBackToSi) {
  for (const io::Quantity q : kQuantities) {
    const auto si_text = io::unitUdunits(System::SI, q), us_text = io::unitUdunits(System::USCustomary, q);
    const Unit si = parse(si_text), us = parse(us_text);
    ASSERT_TRUE(si) << si_text;
    ASSERT_TRUE(us) << us_text;
    EXPECT_NE(si_text, us_text);
    ASSERT_NE(ut_are_convertible(us.get(), si.get()), 0) << us_text << " -> " << si_text;
    cv_converter* to_si = ut_get_converter(us.get(), si.get());
    ASSERT_NE(to_si, nullptr);
    for (const double value : {1.0, 0.0123, 4567.89}) {
      const double written = io::toOutputUnits(System::USCustomary, q, value);
      // UDUNITS holds the factor as a double; the two roundings (ours and
      // its) leave at most a few units in the last place.
      EXPECT_NEAR(cv_convert_double(to_si, written), value, 1e-14 * value) << us_text << " " << value;
      EXPECT_EQ(io::toOutputUnits(System::SI, q, value), value);
    }
    cv_free(to_si);
  }
}

TEST_F(Udunits, TheFootIsExactlyPoint3048Metre) {
  const Unit ft = parse("ft"), m = parse("m");
  ASSERT_TRUE(ft && m);
  cv_converter* c = ut_get_converter(ft.get(), m.get());
  ASSERT_NE(c, nullptr);
  EXPECT_EQ(cv_convert_double(c, 1.0), 0.3048);
  cv_free(c);
  // So a discharge of 1 m³/s is 1 / 0.3048³ = 35.3146667... ft³/s
  // (NIST SP 811, B.8: 1 ft³/s = 2.831685E-02 m³/s).
  EXPECT_NEAR(io::toOutputUnits(System::USCustomary, io::Quantity::Discharge, 2.831685e-2), 1.0, 1e-6);
}

TEST(OutputUnits, NamesOfTheSystems) {
  EXPECT_EQ(io::unitSystemName(System::SI), "si");
  EXPECT_EQ(io::unitSystemName(System::USCustomary), "us");
  EXPECT_EQ(io::unitSystemFromName("us"), System::USCustomary);
  EXPECT_EQ(io::unitSystemFromName("si"), System::SI);
  EXPECT_FALSE(io::unitSystemFromName("US"));
  EXPECT_FALSE(io::unitSystemFromName("metric"));
}

TEST(OutputUnits, UnitSuffixedFieldsAreNamedAfterTheUnitTheyHold) {
  const std::pair<const char*, const char*> renamed[] = {
      {"volume_in_m3", "volume_in_ft3"}, {"inflow_peak_m3s", "inflow_peak_cfs"}, {"dx_m", "dx_ft"},
      {"snap_distance_m", "snap_distance_ft"}, {"level_m", "level_ft"}, {"storage_m3", "storage_ft3"}};
  for (const auto& [si, us] : renamed) {
    EXPECT_EQ(io::fieldName(si, System::USCustomary), us);
    EXPECT_EQ(io::fieldName(si, System::SI), si);
    EXPECT_EQ(io::siFieldName(us), si);
    EXPECT_EQ(io::siFieldName(si), si);
  }
  // Names without a unit, and dimensionless or time suffixes, stay.
  for (const char* same : {"peak_q", "q", "depth", "velocity", "travel_time_h", "dt_sub_s", "attenuation_pct",
                           "reach_id", "m"})
    EXPECT_EQ(io::fieldName(same, System::USCustomary), same);
}

TEST(OutputUnits, ColumnTitlesCarryTheUnitOfTheSystem) {
  EXPECT_EQ(io::columnTitle("peak_q", System::SI), "peak discharge (m³/s)");
  EXPECT_EQ(io::columnTitle("peak_q", System::USCustomary), "peak discharge (ft³/s)");
  EXPECT_EQ(io::columnTitle("volume_in_ft3", System::USCustomary), "volume in at the top (ft³)");
  EXPECT_EQ(io::columnTitle("peak_velocity", System::USCustomary), "peak velocity (ft/s)");
  EXPECT_EQ(io::columnTitle("dx_ft", System::USCustomary), "sub-reach length (ft)");
  EXPECT_EQ(io::columnTitle("inflow_cfs", System::USCustomary), "lake inflow (ft³/s)");
  EXPECT_EQ(io::columnTitle("attenuation_pct", System::USCustomary), "peak attenuation (%)");
  EXPECT_EQ(io::columnTitle("no_such_column", System::SI), "");
}
