#include "support/Scratch.hpp"
#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/CsvRecords.hpp"

#include <cstdlib>
#include <ctime>
#include <fstream>
#include <functional>
#include <random>

#include <fmt/format.h>
#include <fmt/printf.h>
#include <gtest/gtest.h>
#include <unistd.h>

#include "reachwise/Error.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

class ForcingCsvTest : public ::testing::Test {
protected:
  fs::path write(const std::string& name, const std::string& text) {
    const fs::path p = dir_ / name;
    std::ofstream(p, std::ios::binary) << text;
    return p;
  }

  /// Runs `f`, expects an InputError whose location and message name
  /// `file` and (when given) `line`; returns the message.
  static std::string expectInputError(const std::function<void()>& f, const fs::path& file,
                                      std::optional<std::int64_t> line) {
    try {
      f();
    } catch (const InputError& e) {
      const std::string what = e.what();
      EXPECT_EQ(e.where().file, file.string()) << what;
      EXPECT_NE(what.find(file.string()), std::string::npos) << what;
      if (line) {
        EXPECT_EQ(e.where().line, line) << what;
        EXPECT_NE(what.find("line " + std::to_string(*line)), std::string::npos) << what;
      }
      return what;
    }
    ADD_FAILURE() << "no InputError for " << file;
    return {};
  }

  testsupport::TempDir tmp_;
  const fs::path dir_ = tmp_.path();
};


const char* kLong =
    "reach_id,time,discharge\n"
    "R12,2026-05-01T00:00:00Z,4.2\n"
    "R13,2026-05-01T00:00:00Z,1.0\n"
    "R12,2026-05-01T01:00:00Z,6.5\n"
    "R13,2026-05-01T01:00:00Z,1.5\n"
    "R12,2026-05-01T02:00:00Z,5.0\n"
    "R13,2026-05-01T02:00:00Z,1.25\n";

const char* kWide =
    "time,R12,R13\n"
    "2026-05-01T00:00:00Z,4.2,1.0\n"
    "2026-05-01T01:00:00Z,6.5,1.5\n"
    "2026-05-01T02:00:00Z,5.0,1.25\n";

}  // namespace

TEST_F(ForcingCsvTest, LongAndWideFormsGiveTheSameSeries) {
  const Forcing a = readForcingCsv(write("long.csv", kLong), std::nullopt);
  const Forcing b = readForcingCsv(write("wide.csv", kWide), std::nullopt);
  EXPECT_EQ(a.inflow, b.inflow);
  EXPECT_EQ(a.axis.start_unix_s, b.axis.start_unix_s);
  EXPECT_EQ(a.axis.steps, 3u);
  EXPECT_EQ(b.axis.steps, 3u);
  EXPECT_DOUBLE_EQ(a.axis.dt_s, 3600.0);
  EXPECT_EQ(a.axis.start_unix_s, testsupport::utcSeconds(2026, 5, 1, 0));
  EXPECT_EQ(a.inflow.at("R12"), (std::vector<double>{4.2, 6.5, 5.0}));
  EXPECT_EQ(a.inflow.at("R13"), (std::vector<double>{1.0, 1.5, 1.25}));
  EXPECT_TRUE(a.lateral.empty());
  EXPECT_TRUE(a.warnings.empty());
}

TEST_F(ForcingCsvTest, OffsetTimesGiveTheUtcInstantAndKeepTheOffset) {
  const Forcing f = readForcingCsv(write("plus2.csv",
                                         "time,R1\n"
                                         "2026-05-01T03:00:00+02:00,1\n"
                                         "2026-05-01T04:00:00+02:00,2\n"),
                                   std::nullopt);
  EXPECT_EQ(f.axis.start_unix_s, testsupport::utcSeconds(2026, 5, 1, 1));  // 03:00 at +02:00 is 01:00 UTC
  EXPECT_EQ(f.axis.utc_offset_min, 120);
  // Naive times are UTC; a space may replace the T.
  const Forcing n = readForcingCsv(write("naive.csv", "time,R1\n2026-05-01 01:00,1\n2026-05-01 02:00,2\n"),
                                   std::nullopt);
  EXPECT_EQ(n.axis.start_unix_s, testsupport::utcSeconds(2026, 5, 1, 1));
  EXPECT_EQ(n.axis.utc_offset_min, 0);
}

TEST_F(ForcingCsvTest, ToleratesBomCrlfBlanksQuotesAndEmptyLines) {
  const fs::path p = write("messy.csv",
                           "\xEF\xBB\xBF reach_id , Time ,\"discharge\"\r\n"
                           "\r\n"
                           "\"R,1\" , 2026-05-01T00:00Z ,  1.5 \r\n"
                           "  \"R,1\",\"2026-05-01T01:00Z\",\"2.5\"\r\n");
  const Forcing f = readForcingCsv(p, std::nullopt);
  ASSERT_EQ(f.inflow.size(), 1u);
  EXPECT_EQ(f.inflow.at("R,1"), (std::vector<double>{1.5, 2.5}));
}

TEST_F(ForcingCsvTest, TokenizerQuotesAndLineNumbers) {
  const auto records = parseCsvRecords("a,\"b\"\"c\",\"multi\nline\"\n\nx,,y\n", "t.csv");
  ASSERT_EQ(records.size(), 2u);
  EXPECT_EQ(records[0].fields, (std::vector<std::string>{"a", "b\"c", "multi\nline"}));
  EXPECT_EQ(records[0].line, 1);
  EXPECT_EQ(records[1].fields, (std::vector<std::string>{"x", "", "y"}));
  EXPECT_EQ(records[1].line, 4);  // the quoted newline and the blank line both count
  try {
    parseCsvRecords("a,b\nc,\"open\n\n", "t.csv");
    ADD_FAILURE() << "unterminated quote accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line, 2);
  }
  EXPECT_THROW(parseCsvRecords("a,\"b\"c\n", "t.csv"), InputError);
  EXPECT_THROW(parseCsvRecords("a,b\"c\n", "t.csv"), InputError);
}

TEST_F(ForcingCsvTest, ResamplesByLinearInterpolation) {
  // Hand-computed: samples 0, 10, 4 at 0 h, 1 h, 2 h. At dt = 1800 s the
  // midpoints are (0+10)/2 = 5 and (10+4)/2 = 7; at dt = 1200 s the thirds
  // are 10/3, 20/3, then 10 - 6/3 = 8 and 10 - 12/3 = 6.
  const fs::path p = write("r.csv", "time,R1\n2026-05-01T00:00Z,0\n2026-05-01T01:00Z,10\n2026-05-01T02:00Z,4\n");
  CsvForcingOptions half;
  half.dt_s = 1800;
  const Forcing a = readForcingCsv(p, std::nullopt, half);
  EXPECT_EQ(a.axis.steps, 5u);
  const std::vector<double> expect_a{0, 5, 10, 7, 4};
  for (std::size_t k = 0; k < 5; ++k) EXPECT_NEAR(a.inflow.at("R1")[k], expect_a[k], 1e-12) << k;
  CsvForcingOptions third;
  third.dt_s = 1200;
  const Forcing b = readForcingCsv(p, std::nullopt, third);
  const std::vector<double> expect_b{0, 10.0 / 3, 20.0 / 3, 10, 8, 6, 4};
  ASSERT_EQ(b.axis.steps, expect_b.size());
  for (std::size_t k = 0; k < expect_b.size(); ++k) EXPECT_NEAR(b.inflow.at("R1")[k], expect_b[k], 1e-12) << k;
  // Irregular samples (0 h, 1 h, 3 h) are fine with --dt: at 2 h, halfway
  // between 4 and 8 gives 6 (hand-computed).
  const fs::path q = write("irr.csv", "reach_id,time,discharge\nR1,2026-05-01T00:00Z,2\nR1,2026-05-01T01:00Z,4\nR1,2026-05-01T03:00Z,8\n");
  CsvForcingOptions hourly;
  hourly.dt_s = 3600;
  EXPECT_EQ(readForcingCsv(q, std::nullopt, hourly).inflow.at("R1"), (std::vector<double>{2, 4, 6, 8}));
}

TEST_F(ForcingCsvTest, CommonAxisHoldsSeriesOutsideTheirDataAndSaysSo) {
  const fs::path in = write("in.csv", "time,R1\n2026-05-01T00:00Z,1\n2026-05-01T01:00Z,3\n");
  const fs::path lat = write("lat.csv",
                             "reach_id,time,discharge\n"
                             "R2,2026-05-01T01:00Z,0.5\nR2,2026-05-01T02:00Z,0.7\nR2,2026-05-01T03:00Z,0.2\n");
  const Forcing f = readForcingCsv(in, lat);
  EXPECT_EQ(f.axis.start_unix_s, testsupport::utcSeconds(2026, 5, 1, 0));
  EXPECT_EQ(f.axis.steps, 4u);  // 00:00 .. 03:00, the union of both spans
  EXPECT_EQ(f.inflow.at("R1"), (std::vector<double>{1, 3, 3, 3}));
  EXPECT_EQ(f.lateral.at("R2"), (std::vector<double>{0.5, 0.5, 0.7, 0.2}));
  ASSERT_EQ(f.warnings.size(), 2u);
  EXPECT_NE(f.warnings[0].find(in.string()), std::string::npos);
  EXPECT_NE(f.warnings[0].find("last value"), std::string::npos);
  EXPECT_NE(f.warnings[1].find("first value"), std::string::npos);
  EXPECT_EQ(f.lateral_origin, lat.string());
  // An explicit window cuts both.
  CsvForcingOptions window;
  window.start_unix_s = testsupport::utcSeconds(2026, 5, 1, 1);
  window.end_unix_s = testsupport::utcSeconds(2026, 5, 1, 2);
  const Forcing w = readForcingCsv(in, lat, window);
  EXPECT_EQ(w.axis.steps, 2u);
  EXPECT_EQ(w.inflow.at("R1"), (std::vector<double>{3, 3}));
  EXPECT_EQ(w.lateral.at("R2"), (std::vector<double>{0.5, 0.7}));
}

TEST_F(ForcingCsvTest, ConvertsCubicFeetPerSecond) {
  // 1 ft = 0.3048 m exactly (international foot, 1959), so
  // 100 ft^3/s = 100 * 0.3048^3 = 2.8316846592 m^3/s.
  CsvForcingOptions cfs;
  cfs.unit = units::System::USCustomary;
  const Forcing f = readForcingCsv(write("cfs.csv", "time,R1\n2026-05-01T00:00Z,100\n2026-05-01T01:00Z,0\n"),
                                   std::nullopt, cfs);
  EXPECT_NEAR(f.inflow.at("R1")[0], 2.8316846592, 1e-12);
}

TEST_F(ForcingCsvTest, BadInputNamesFileAndLine) {
  struct Case {
    const char* name;
    const char* text;
    std::int64_t line;
    const char* says;
  };
  const Case cases[] = {
      {"time.csv", "time,R1\n2026-05-01T00:00Z,1\n2026-05-01T25:00Z,1\n", 3, "hour 25"},
      {"feb30.csv", "time,R1\n2026-02-30T00:00Z,1\n", 2, "day 30"},
      {"order.csv", "reach_id,time,discharge\nR1,2026-05-01T01:00Z,1\nR2,2026-05-01T00:00Z,1\nR1,2026-05-01T00:00Z,1\n", 4, "earlier"},
      {"dup.csv", "reach_id,time,discharge\nR1,2026-05-01T01:00Z,1\nR2,2026-05-01T01:00Z,1\nR1,2026-05-01T01:00Z,1\n", 4, "repeats"},
      {"dupwide.csv", "time,R1\n2026-05-01T01:00Z,1\n2026-05-01T03:00+02:00,1\n", 3, "repeats"},
      {"text.csv", "time,R1\n2026-05-01T00:00Z,abc\n", 2, "not a finite number"},
      {"neg.csv", "time,R1\n2026-05-01T00:00Z,1\n2026-05-01T01:00Z,-0.5\n", 3, "negative"},
      {"nan.csv", "time,R1\n2026-05-01T00:00Z,nan\n", 2, "not finite"},
      {"inf.csv", "reach_id,time,discharge\nR1,2026-05-01T00:00Z,1\nR1,2026-05-01T01:00Z,inf\n", 3, "not finite"},
      {"empty.csv", "", 1, "empty"},
      {"bomonly.csv", "\xEF\xBB\xBF\r\n", 1, "empty"},
      {"headeronly.csv", "reach_id,time,discharge\n", 2, "no data rows"},
      {"header.csv", "id,when,q\nR1,2026-05-01T00:00Z,1\n", 1, "header"},
      {"fields.csv", "time,R1,R2\n2026-05-01T00:00Z,1\n", 2, "fields"},
      {"irregular.csv", "time,R1\n2026-05-01T00:00Z,1\n2026-05-01T01:00Z,1\n2026-05-01T03:00Z,1\n", 4, "to resample"},
      {"gap.csv", "time,R1,R2\n2026-05-01T00:00Z,1,1\n2026-05-01T01:00Z,,1\n2026-05-01T02:00Z,1,1\n", 4, "to resample"},
      {"noid.csv", "reach_id,time,discharge\n ,2026-05-01T00:00Z,1\n", 2, "reach id"},
      {"twocols.csv", "time,R1,R1\n2026-05-01T00:00Z,1,1\n", 1, "two columns"},
      {"nocol.csv", "time,R1,R2\n2026-05-01T00:00Z,1,\n", 1, "no values"},
  };
  for (const Case& c : cases) {
    const fs::path p = write(c.name, c.text);
    const std::string what =
        expectInputError([&] { readForcingCsv(p, std::nullopt); }, p, c.line);
    EXPECT_NE(what.find(c.says), std::string::npos) << c.name << ": " << what;
  }
}

TEST_F(ForcingCsvTest, BadAxesAreRefused) {
  const fs::path in = write("in.csv", "time,R1\n2026-05-01T00:00Z,1\n2026-05-01T01:00Z,2\n2026-05-01T02:00Z,2\n");
  // A --dt of 5400 s does not divide the two-hour span.
  CsvForcingOptions odd;
  odd.dt_s = 5400;
  expectInputError([&] { readForcingCsv(in, std::nullopt, odd); }, in, std::nullopt);
  // Lateral on the same step but half an hour off the grid, without --dt.
  const fs::path off = write("off.csv", "time,R2\n2026-05-01T00:30Z,1\n2026-05-01T01:30Z,1\n");
  expectInputError([&] { readForcingCsv(in, off); }, off, 2);
  // With --dt it is resampled instead.
  CsvForcingOptions hourly;
  hourly.dt_s = 3600;
  EXPECT_EQ(readForcingCsv(in, off, hourly).lateral.at("R2"), (std::vector<double>{1, 1, 1}));
  // Lateral on a different step, without --dt.
  const fs::path half = write("half.csv", "time,R2\n2026-05-01T00:00Z,1\n2026-05-01T00:30Z,1\n");
  const std::string what = expectInputError([&] { readForcingCsv(in, half); }, half, std::nullopt);
  EXPECT_NE(what.find("give a time step"), std::string::npos);
  // A file that cannot be opened.
  const fs::path missing = dir_ / "missing.csv";
  expectInputError([&] { readForcingCsv(missing, std::nullopt); }, missing, std::nullopt);
  CsvForcingOptions zero;
  zero.dt_s = 0;
  EXPECT_THROW(readForcingCsv(in, std::nullopt, zero), InvalidParameter);
}

TEST_F(ForcingCsvTest, UnknownReachIdsAreListedAllAtOnce) {
  const fs::path in = write("in.csv", "time,R1,X1,R2,X2\n2026-05-01T00:00Z,1,1,1,1\n2026-05-01T01:00Z,1,1,1,1\n");
  const fs::path lat = write("lat.csv", "time,X3,R1\n2026-05-01T00:00Z,1,1\n2026-05-01T01:00Z,1,1\n");
  const MemoryForcingSource source(readForcingCsv(in, lat));
  EXPECT_EQ(source.ids(), (std::vector<std::string>{"R1", "R2", "X1", "X2", "X3"}));
  const std::set<std::string, std::less<>> network{"R1", "R2", "R3"};
  try {
    requireKnownReaches(source, network);
    ADD_FAILURE() << "unknown reaches accepted";
  } catch (const InputError& e) {
    const std::string what = e.what();
    for (const char* id : {"X1", "X2", "X3"}) EXPECT_NE(what.find(id), std::string::npos) << what;
    EXPECT_EQ(what.find("R1"), std::string::npos) << what;
    EXPECT_NE(what.find("3 reach ids"), std::string::npos) << what;
    EXPECT_NE(what.find(in.string()), std::string::npos) << what;
    EXPECT_NE(what.find(lat.string()), std::string::npos) << what;
  }
  EXPECT_NO_THROW(requireKnownReaches(source, {"R1", "R2", "X1", "X2", "X3"}));
  std::vector<double> out{42};
  EXPECT_FALSE(source.inflow("X3", out));
  EXPECT_EQ(out, std::vector<double>{42});
  EXPECT_TRUE(source.lateral("X3", out));
  EXPECT_EQ(out, (std::vector<double>{1, 1}));
}

TEST_F(ForcingCsvTest, SeededRandomLongAndWideAgree) {
  // Random series written in both forms (long form rows shuffled across
  // reaches, which must not matter) read back to the same values.
  const unsigned seed = 7;
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> q(0, 500);
  const int reaches = 7, steps = 30;
  std::vector<std::vector<double>> values(reaches, std::vector<double>(steps));
  std::string wide = "time";
  for (int r = 0; r < reaches; ++r) wide += fmt::format(",R{}", r);
  wide += "\n";
  std::vector<std::string> rows;
  for (int k = 0; k < steps; ++k) {
    const std::string t = formatIsoTime(std::int64_t{testsupport::utcSeconds(2026, 5, 1, 0)} + k * 900, 60);
    wide += t;
    for (int r = 0; r < reaches; ++r) {
      values[r][k] = q(rng);
      const std::string v = fmt::format("{}", values[r][k]);  // shortest round-trip form
      wide += "," + v;
      rows.push_back(fmt::format("R{}", r) + "," + t + "," + v);
    }
    wide += "\n";
  }
  std::string longform = "reach_id,time,discharge\n";
  for (const auto& row : rows) longform += row + "\n";
  const Forcing a = readForcingCsv(write("w.csv", wide), std::nullopt);
  const Forcing b = readForcingCsv(write("l.csv", longform), std::nullopt);
  EXPECT_EQ(a.inflow, b.inflow) << "seed " << seed;
  for (int r = 0; r < reaches; ++r) EXPECT_EQ(a.inflow.at(fmt::format("R{}", r)), values[r]) << "seed " << seed;
  EXPECT_DOUBLE_EQ(a.axis.dt_s, 900);
  EXPECT_EQ(a.axis.utc_offset_min, 60);
}

namespace {

/// strtod's reading of a cell (blanks around it dropped): the reference, a
/// general-purpose reader that also takes a leading '+'.
double strtodCell(const std::string& cell) {
  const std::string_view t = trimCsvField(cell);
  return std::strtod(std::string(t).c_str(), nullptr);
}

/// Cell `k` in one of the written forms a file may hold: full precision,
/// few decimals, exponents, a leading '+', blanks around it.
std::string cellText(double v, unsigned form) {
  switch (form % 7) {
    case 0: return fmt::sprintf("%.17g", v);
    case 1: return fmt::sprintf("%.3f", v);
    case 2: return fmt::sprintf("%.6e", v);
    case 3: return fmt::sprintf("+%g", v);
    case 4: return fmt::sprintf("  %.2f\t", v);
    case 5: return fmt::sprintf("%.4E", v);
    default: return fmt::format("{}", v);
  }
}

}  // namespace

TEST_F(ForcingCsvTest, EveryNumberFormReadsAsStrtodReadsIt) {
  // Random discharges in seven written forms, wide form with CRLF line
  // ends and the same cells in the long form: every value read is the
  // double strtod gives for its cell (bit for bit: EXPECT_EQ on doubles).
  std::mt19937 rng(3);
  std::uniform_real_distribution<double> q(0, 20000);
  const int reaches = 40, steps = 60;
  std::vector<std::vector<std::string>> cells(reaches, std::vector<std::string>(steps));
  std::string wide = "time";
  for (int r = 0; r < reaches; ++r) wide += fmt::format(",R{}", r);
  wide += "\r\n";
  std::string longform = "reach_id,time,discharge\r\n";
  for (int k = 0; k < steps; ++k) {
    const std::string t = formatIsoTime(std::int64_t{testsupport::utcSeconds(2026, 5, 1, 0)} + k * 3600, 0);
    wide += t;
    for (int r = 0; r < reaches; ++r) {
      cells[r][k] = cellText(q(rng), rng());
      wide += "," + cells[r][k];
      longform += fmt::format("R{},{},{}\r\n", r, t, cells[r][k]);
    }
    wide += "\r\n";
  }
  const Forcing a = readForcingCsv(write("forms_wide.csv", wide), std::nullopt);
  const Forcing b = readForcingCsv(write("forms_long.csv", longform), std::nullopt);
  ASSERT_EQ(a.inflow.size(), static_cast<std::size_t>(reaches));
  for (int r = 0; r < reaches; ++r) {
    const std::string id = fmt::format("R{}", r);
    ASSERT_EQ(a.inflow.at(id).size(), static_cast<std::size_t>(steps));
    for (int k = 0; k < steps; ++k) {
      EXPECT_EQ(a.inflow.at(id)[k], strtodCell(cells[r][k])) << id << " " << cells[r][k];
      EXPECT_EQ(b.inflow.at(id)[k], strtodCell(cells[r][k])) << id << " " << cells[r][k];
    }
  }
}

TEST_F(ForcingCsvTest, VeryLongLinesAndABadNumberDeepInOne) {
  // 70,000 columns of full-precision values: each line is longer than the
  // block the file is read in (1 MiB), so every record straddles blocks.
  const int reaches = 70000, steps = 3;
  std::mt19937_64 rng(5);
  std::uniform_real_distribution<double> q(0, 1000);
  std::string header = "time";
  for (int r = 0; r < reaches; ++r) header += fmt::format(",R{}", r);
  header += "\n";
  std::vector<std::vector<std::string>> rows(steps, std::vector<std::string>(reaches));
  auto text = [&](const std::string* bad) {
    std::string out = header;
    for (int k = 0; k < steps; ++k) {
      out += formatIsoTime(std::int64_t{testsupport::utcSeconds(2026, 5, 1, 0)} + k * 3600, 0);
      for (int r = 0; r < reaches; ++r) out += "," + (bad && k == 2 && r == 40000 ? *bad : rows[k][r]);
      out += "\n";
    }
    return out;
  };
  for (auto& row : rows)
    for (auto& cell : row) cell = fmt::sprintf("%.17g", q(rng));
  const std::string good = text(nullptr);
  ASSERT_GT(good.size() / (steps + 1), std::size_t{1} << 20);
  const Forcing f = readForcingCsv(write("long_lines.csv", good), std::nullopt);
  ASSERT_EQ(f.inflow.size(), static_cast<std::size_t>(reaches));
  for (int r : {0, 1, 29999, 40000, 69999})
    for (int k = 0; k < steps; ++k)
      EXPECT_EQ(f.inflow.at(fmt::format("R{}", r))[k], strtodCell(rows[k][r])) << r << " " << k;

  // The bad cell: line 4 (the header is line 1), reach R40000, its time,
  // field "discharge", and the message the reader has always given.
  const std::string bad_cell = "1.2.3";
  const fs::path p = write("long_lines_bad.csv", text(&bad_cell));
  InputLocation expected;
  expected.file = p.string();
  expected.line = 4;
  expected.reach_id = "R40000";
  expected.time = "2026-05-01T02:00:00Z";
  expected.field = "discharge";
  try {
    readForcingCsv(p, std::nullopt);
    ADD_FAILURE() << "a bad number was accepted";
  } catch (const InputError& e) {
    EXPECT_STREQ(e.what(), InputError(expected, "'1.2.3' is not a finite number").what());
  }
}

TEST_F(ForcingCsvTest, ObservedWideColumnsWithGapsKeepTheirOwnTimesAndLines) {
  // Hand-written: A has values on lines 2 and 5, B on lines 3, 4 and 5
  // (an empty cell and NA are missing observations).
  const fs::path p = write("obs.csv",
                           "time,A,B\n"
                           "2026-05-01T00:00Z,1,NA\n"
                           "2026-05-01T01:00Z,,2\n"
                           "2026-05-01T02:00Z,na,3\n"
                           "2026-05-01T03:00Z,4,5\n");
  const CsvForcingFile f = readForcingCsvFile(p, units::System::SI, CsvValues::Observed);
  const double t0 = static_cast<double>(testsupport::utcSeconds(2026, 5, 1, 0));
  const RawSeries& a = f.series.at("A");
  EXPECT_EQ(a.t_s.values(), (std::vector<double>{t0, t0 + 3 * 3600}));
  EXPECT_EQ(a.q_m3s, (std::vector<double>{1, 4}));
  EXPECT_EQ(a.line.values(), (std::vector<std::int64_t>{2, 5}));
  const RawSeries& b = f.series.at("B");
  EXPECT_EQ(b.t_s.values(), (std::vector<double>{t0 + 3600, t0 + 7200, t0 + 3 * 3600}));
  EXPECT_EQ(b.q_m3s, (std::vector<double>{2, 3, 5}));
  EXPECT_EQ(b.line.values(), (std::vector<std::int64_t>{3, 4, 5}));
}
