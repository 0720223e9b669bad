#include "support/Scratch.hpp"
#include "reachwise/io/ForcingAxis.hpp"

#include <random>

#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

using namespace reachwise;
using namespace reachwise::io;

namespace {

/// Samples 0, 10, 4 of reach R1 at 00:00, 01:00 and 02:00 UTC on
/// 2026-05-01, read (from any format) with a UTC offset of 0.
RawForcing hourlySamples() {
  RawForcing f;
  f.file = "memory";
  const double t0 = static_cast<double>(testsupport::utcSeconds(2026, 5, 1, 0));
  f.series["R1"] = RawSeries{{t0, t0 + 3600, t0 + 7200}, {0, 10, 4}, {2, 3, 4}};
  return f;
}

/// The axis a NetCDF file beside might have: half-hourly from 00:30 UTC,
/// four steps, written at +02:00.
routing::TimeAxis halfHourly() {
  routing::TimeAxis axis;
  axis.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 0, 30);
  axis.dt_s = 1800;
  axis.steps = 4;
  axis.utc_offset_min = 120;
  return axis;
}

}  // namespace

TEST(ForcingAxis, AnAxisGivenWholeIsTakenAsItIsAndSeriesAreResampledOntoIt) {
  const RawForcing lateral = hourlySamples();
  AxisRequest request;
  request.on_axis = halfHourly();
  const Forcing f = buildForcing(nullptr, &lateral, request);
  EXPECT_EQ(f.axis.start_unix_s, halfHourly().start_unix_s);
  EXPECT_EQ(f.axis.dt_s, 1800.0);
  EXPECT_EQ(f.axis.steps, 4u);
  EXPECT_EQ(f.axis.utc_offset_min, 120);  // the given axis's, not the samples' 0
  // Hand-computed linear interpolation: 00:30 is halfway between 0 and 10,
  // 01:30 halfway between 10 and 4.
  const std::vector<double> expected{5, 10, 7, 4};
  ASSERT_EQ(f.lateral.at("R1").size(), expected.size());
  for (std::size_t k = 0; k < expected.size(); ++k) EXPECT_NEAR(f.lateral.at("R1")[k], expected[k], 1e-12) << k;
  EXPECT_TRUE(f.warnings.empty());  // the data cover the whole axis
  EXPECT_EQ(f.lateral_origin, "memory");
}

TEST(ForcingAxis, SeriesAreResampledOnlyWhenAsked) {
  // Lateral samples on the half hour beside hourly inflow: off the common
  // grid, refused unless an axis is given to resample onto.
  const RawForcing inflow = hourlySamples();
  RawForcing lateral;
  lateral.file = "half past";
  const double t0 = static_cast<double>(halfHourly().start_unix_s);
  lateral.series["R2"] = RawSeries{{t0, t0 + 3600}, {1, 3}, {2, 3}};
  EXPECT_THROW(buildForcing(&inflow, &lateral, {}), InputError);
  AxisRequest request;
  request.on_axis = halfHourly();
  const Forcing f = buildForcing(&inflow, &lateral, request);
  // 01:00 is halfway between 1 (00:30) and 3 (01:30); held at 3 after.
  EXPECT_EQ(f.lateral.at("R2"), (std::vector<double>{1, 2, 3, 3}));
  ASSERT_EQ(f.warnings.size(), 1u);
  EXPECT_NE(f.warnings[0].find("half past"), std::string::npos) << f.warnings[0];
}

TEST(ForcingAxis, AnAxisGivenWholeExcludesAStepStartOrEnd) {
  const RawForcing inflow = hourlySamples();
  AxisRequest step;
  step.on_axis = halfHourly();
  step.dt_s = 1800;
  EXPECT_THROW(chooseForcingAxis(&inflow, nullptr, step), InvalidParameter);
  AxisRequest start;
  start.on_axis = halfHourly();
  start.start_unix_s = halfHourly().start_unix_s;
  EXPECT_THROW(chooseForcingAxis(&inflow, nullptr, start), InvalidParameter);
  AxisRequest end;
  end.on_axis = halfHourly();
  end.end_unix_s = halfHourly().start_unix_s + 5400;
  EXPECT_THROW(chooseForcingAxis(&inflow, nullptr, end), InvalidParameter);
  EXPECT_THROW(chooseForcingAxis(nullptr, nullptr, {}), InvalidParameter);
}

TEST(ForcingAxis, TimesOutsideWhatAnAxisMayCoverAreRefused) {
  // Samples in 1600 (a typo for 2026, say): before the earliest axis time
  // (TimeAxis::kEarliest_unix_s, 1678), an InputError naming the file.
  RawForcing old;
  old.file = "old samples";
  const double t0 = static_cast<double>(testsupport::utcSeconds(1600, 5, 1, 0));
  old.series["R1"] = RawSeries{{t0, t0 + 3600}, {1, 2}, {2, 3}};
  try {
    chooseForcingAxis(&old, nullptr, {});
    ADD_FAILURE() << "an axis in 1600 was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().file, "old samples") << e.what();
  }
  // A start and end both given by the caller are the caller's to fix.
  const RawForcing inflow = hourlySamples();
  AxisRequest window;
  window.start_unix_s = testsupport::utcSeconds(1600, 5, 1, 0);
  window.end_unix_s = testsupport::utcSeconds(2026, 5, 1, 2);
  window.dt_s = 3600;
  EXPECT_THROW(chooseForcingAxis(&inflow, nullptr, window), InvalidParameter);
}

TEST(ForcingAxis, AFirstSampleOffTheWholeSecondSaysToPutTimesOnWholeSeconds) {
  // The run starts at the earliest sample; there is no start option to
  // give, so the message asks for whole-second times instead.
  RawForcing f = hourlySamples();
  const RawSeries s = f.series["R1"];
  RawSeries later;  // the same samples half a second later
  for (std::size_t k = 0; k < s.t_s.size(); ++k) {
    later.t_s.push_back(s.t_s[k] + 0.5);
    later.q_m3s.push_back(s.q_m3s[k]);
    later.line.push_back(s.line[k]);
  }
  f.series["R1"] = later;
  try {
    chooseForcingAxis(&f, nullptr, {});
    ADD_FAILURE() << "a start at half a second was accepted";
  } catch (const InputError& e) {
    const std::string what = e.what();
    EXPECT_EQ(what.find("give a start"), std::string::npos) << what;
    EXPECT_NE(what.find("whole second"), std::string::npos) << what;
  }
}

TEST(ForcingAxis, AnAxisLongerThanAllowedIsRefusedBeforeItIsMade) {
  // Three hourly samples make three steps: allowed with max_steps 3, not 2.
  const RawForcing f = hourlySamples();
  AxisRequest request;
  request.max_steps = 3;
  EXPECT_EQ(chooseForcingAxis(&f, nullptr, request).steps, 3u);
  request.max_steps = 2;
  try {
    chooseForcingAxis(&f, nullptr, request);
    ADD_FAILURE() << "three steps were allowed under a limit of two";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("--max-steps 3"), std::string::npos) << e.what();
  }
  // 1e-16 s over two hours is 7.2e19 intervals, beyond size_t: refused, not
  // converted (undefined behaviour).
  AxisRequest tiny;
  tiny.dt_s = 1e-16;
  EXPECT_THROW(chooseForcingAxis(&f, nullptr, tiny), InvalidParameter);
}

TEST(SteppedSequence, GivesBackEveryValueBitForBit) {
  // Irregular random values (one run each, at worst) and regular ones
  // (hourly times from a fractional start, lines every 7 rows: one run).
  std::mt19937_64 rng(9);
  std::uniform_real_distribution<double> any(-1e9, 1e9);
  SteppedSequence<double> irregular;
  std::vector<double> written;
  for (int k = 0; k < 2000; ++k) {
    written.push_back(k % 3 == 0 ? any(rng) : (written.empty() ? 0.0 : written.back() + 0.1));
    irregular.push_back(written.back());
  }
  ASSERT_EQ(irregular.size(), written.size());
  for (std::size_t k = 0; k < written.size(); ++k) EXPECT_EQ(irregular[k], written[k]) << k;
  EXPECT_EQ(irregular.values(), written);
  SteppedSequence<double> hourly;
  SteppedSequence<std::int64_t> lines;
  const double t0 = 1777593600.25;
  for (int k = 0; k < 720; ++k) {
    hourly.push_back(t0 + 3600.0 * k);
    lines.push_back(2 + 7 * k);
  }
  for (int k = 0; k < 720; ++k) {
    EXPECT_EQ(hourly[static_cast<std::size_t>(k)], t0 + 3600.0 * k) << k;
    EXPECT_EQ(lines[static_cast<std::size_t>(k)], 2 + 7 * k) << k;
  }
  EXPECT_EQ(hourly.runs(), 1u);
  EXPECT_EQ(lines.runs(), 1u);
  EXPECT_EQ(hourly.back(), t0 + 3600.0 * 719);
}

TEST(ForcingAxis, TakingTheSamplesGivesWhatCopyingThemGives) {
  // On the grid (values moved), inside a window (copied and cut) and
  // resampled: takeForcing and buildForcing agree, and the taken file's
  // series are emptied.
  const double t0 = static_cast<double>(testsupport::utcSeconds(2026, 5, 1, 0));
  RawForcing f;
  f.file = "memory";
  f.series["R1"] = RawSeries{{t0, t0 + 3600, t0 + 7200}, {0, 10, 4}, {2, 3, 4}};
  f.series["R2"] = RawSeries{{t0 + 3600, t0 + 7200}, {1, 2}, {5, 6}};
  AxisRequest window;
  window.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 1);
  window.end_unix_s = testsupport::utcSeconds(2026, 5, 1, 2);
  AxisRequest resample;
  resample.dt_s = 1800;
  for (const AxisRequest& request : {AxisRequest{}, window, resample}) {
    const Forcing copied = buildForcing(&f, nullptr, request);
    RawForcing taken_from = f;
    const Forcing taken = takeForcing(&taken_from, nullptr, request);
    EXPECT_EQ(taken.inflow, copied.inflow);
    EXPECT_EQ(taken.warnings, copied.warnings);
    EXPECT_EQ(taken.axis.steps, copied.axis.steps);
    for (const auto& entry : taken_from.series) EXPECT_TRUE(entry.second.q_m3s.empty()) << entry.first;
  }
  // Hand-computed for the whole axis: R2 held at its first value at 00:00.
  EXPECT_EQ(buildForcing(&f, nullptr, {}).inflow.at("R2"), (std::vector<double>{1, 1, 2}));
}
