#include "support/Scratch.hpp"
#include "reachwise/io/CsvRecords.hpp"

#include <bit>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <random>

#include <fmt/format.h>
#include <fmt/printf.h>
#include <gtest/gtest.h>

#include "reachwise/Error.hpp"

namespace fs = std::filesystem;
using namespace reachwise;
using namespace reachwise::io;

namespace {

/// The C library's reading of `text` (the reference: a general-purpose
/// reader, correctly rounded in glibc), and whether it took all of it.
bool strtodWhole(const std::string& text, double& out) {
  char* end = nullptr;
  out = std::strtod(text.c_str(), &end);
  return !text.empty() && end == text.c_str() + text.size();
}

/// parseCsvNumber gives the very double strtod gives for `text`.
void expectSameAsStrtod(const std::string& text) {
  double reference = 0;
  ASSERT_TRUE(strtodWhole(text, reference)) << text;
  double ours = -1;
  ASSERT_TRUE(parseCsvNumber(text, ours)) << text;
  EXPECT_EQ(std::bit_cast<std::uint64_t>(ours), std::bit_cast<std::uint64_t>(reference))
      << text << ": " << fmt::format("{} vs {}", ours, reference);
}

/// Every record of `text` as (line, fields), by the scanner over `text` in memory.
std::vector<std::pair<std::int64_t, std::vector<std::string>>> inMemory(std::string_view text) {
  std::vector<std::pair<std::int64_t, std::vector<std::string>>> out;
  CsvScanner scanner(text, "t.csv");
  while (scanner.next()) out.emplace_back(scanner.line(), std::vector<std::string>(scanner.fields().begin(), scanner.fields().end()));
  return out;
}

/// The same, by the scanner over a file read in blocks of `block` bytes.
std::vector<std::pair<std::int64_t, std::vector<std::string>>> fromFile(const fs::path& path, std::size_t block) {
  std::vector<std::pair<std::int64_t, std::vector<std::string>>> out;
  CsvScanner scanner(path, block);
  while (scanner.next()) out.emplace_back(scanner.line(), std::vector<std::string>(scanner.fields().begin(), scanner.fields().end()));
  return out;
}

}  // namespace

TEST(CsvNumber, RandomDoublesPrintedInFullReadAsStrtodReadsThem) {
  // Random bit patterns (every exponent, subnormals included) printed with
  // %.17g, which round-trips any double (C standard, DBL_DECIMAL_DIG);
  // both readers must give the original bits back.
  std::mt19937_64 rng(20261203);
  int tried = 0;
  while (tried < 4000) {
    const double v = std::bit_cast<double>(rng());
    if (!std::isfinite(v) || v < 0) continue;
    ++tried;
    const std::string text = fmt::sprintf("%.17g", v);
    expectSameAsStrtod(text);
    double ours = 0;
    ASSERT_TRUE(parseCsvNumber(text, ours));
    EXPECT_EQ(std::bit_cast<std::uint64_t>(ours), std::bit_cast<std::uint64_t>(v)) << text;
  }
}

TEST(CsvNumber, ShortDecimalsAndExponentsReadAsStrtodReadsThem) {
  // Discharges as files hold them: a few decimals (the shorter path for up
  // to 15 digits), the shortest round-trip form, exponents, and digits
  // beyond what the shorter path takes.
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> q(0, 5000);
  std::uniform_int_distribution<int> decimals(0, 9);
  for (int i = 0; i < 3000; ++i) {
    const double v = q(rng);
    expectSameAsStrtod(fmt::sprintf("%.*f", decimals(rng), v));
    expectSameAsStrtod(fmt::format("{}", v));           // shortest round-trip form
    expectSameAsStrtod(fmt::sprintf("%.6e", v));         // 1.234560e+03
    expectSameAsStrtod(fmt::sprintf("%.3E", v / 1e6));   // capital E, negative exponent
    expectSameAsStrtod(fmt::sprintf("%.20f", v));        // 24+ digits: not the shorter path
  }
  for (const char* text : {"0", "0.0", "000012.500", "5.", ".5", "1e5", "1E-5", "123456789012345",
                           "1234567890123456", "0.000000000000001", "9007199254740993", "4.9e-324",
                           "2.2250738585072011e-308", "1.7976931348623157e308", "0.1", "0.3"})
    expectSameAsStrtod(text);
}

TEST(CsvNumber, RefusesWhatIsNotOneWholeNumber) {
  // No blanks or '+' at this level (the forcing reader trims and takes a
  // leading '+' itself), no decimal comma, no hexadecimal (strtod reads
  // "0x1p3"; the format has no such form), nothing out of range.
  double out = 42;
  for (const char* text : {"", " 1", "1 ", "+1", "1,5", "1.2.3", "0x1p3", "abc", "1e", "e5", ".", "-", "1e400", "5..",
                           "12a"})
    EXPECT_FALSE(parseCsvNumber(text, out)) << text;
  EXPECT_EQ(out, 42);
  // A sign and the words from_chars knows are read, for the reader to refuse with its own message.
  EXPECT_TRUE(parseCsvNumber("-2.5", out));
  EXPECT_EQ(out, -2.5);
  EXPECT_TRUE(parseCsvNumber("inf", out));
  EXPECT_TRUE(std::isinf(out));
}

TEST(CsvScanner, HandWrittenRecordsAndLines) {
  // RFC 4180 quoting, a BOM, CRLF and lone-CR line ends, blank lines
  // skipped, blanks kept around unquoted fields (written out by hand).
  const std::string text =
      "\xEF\xBB\xBF" "a, b ,\"c\"\"d\"\r\n"
      "\r\n"
      "\"multi\r\nline\",x\r"
      "  \n"
      ",\n"
      "last";
  const auto got = inMemory(text);
  ASSERT_EQ(got.size(), 4u);
  EXPECT_EQ(got[0].first, 1);
  EXPECT_EQ(got[0].second, (std::vector<std::string>{"a", " b ", "c\"d"}));
  EXPECT_EQ(got[1].first, 3);
  EXPECT_EQ(got[1].second, (std::vector<std::string>{"multi\nline", "x"}));  // CRLF inside quotes read as LF
  EXPECT_EQ(got[2].first, 6);  // the quoted line end, the lone CR and the blank line all count
  EXPECT_EQ(got[2].second, (std::vector<std::string>{"", ""}));
  EXPECT_EQ(got[3].first, 7);
  EXPECT_EQ(got[3].second, (std::vector<std::string>{"last"}));
}

TEST(CsvScanner, AFileReadInSmallBlocksGivesTheRecordsOfTheWholeText) {
  // Every block size from 16 bytes up puts block ends inside fields,
  // quotes, doubled quotes, CRLF pairs and the BOM; a record longer than
  // the block makes the block grow. The records and lines must be those of
  // the text scanned whole.
  testsupport::TempDir tmp;
  std::mt19937 rng(11);
  std::string text = "\xEF\xBB\xBF" "time,\"R,1\",R2\r\n";
  for (int row = 0; row < 60; ++row) {
    text += fmt::format("2026-05-01T{:02}:00Z", row % 24);
    const int fields = row == 30 ? 400 : 3;  // one record far longer than any small block
    for (int f = 0; f < fields; ++f) {
      switch (rng() % 6) {
        case 0: text += fmt::format(",{}", rng() % 1000); break;
        case 1: text += fmt::format(", {:.17g} ", std::ldexp(static_cast<double>(rng()), -20)); break;
        case 2: text += ",\"quoted \"\"x\"\" \r\n over lines\""; break;
        case 3: text += ","; break;
        case 4: text += ",\"\""; break;
        default: text += fmt::format(",+{}e-3", rng() % 100000); break;
      }
    }
    text += row % 7 == 0 ? "\r\n\r\n" : row % 5 == 0 ? "\r" : "\n";
  }
  const fs::path path = tmp.path() / "blocks.csv";
  std::ofstream(path, std::ios::binary) << text;
  const auto whole = inMemory(text);
  ASSERT_EQ(whole.size(), 61u);
  for (std::size_t block : {16u, 17u, 19u, 31u, 64u, 100u, 257u, 4096u, 1u << 20})
    EXPECT_EQ(fromFile(path, block), whole) << "block " << block;
}

TEST(CsvScanner, ErrorsNameTheSameLineWhateverTheBlock) {
  testsupport::TempDir tmp;
  struct Case {
    std::string text;
    std::int64_t line;
    const char* says;
  };
  const std::string rows = "a,b\n1,2\n3,4\n";
  const Case cases[] = {
      {rows + "5,\"open\nnever closed\n", 4, "not closed"},
      {rows + "5,\"x\"y\n", 4, "after the closing quote"},
      {rows + "\"a\nb\",5,6\"7\n", 5, "quote inside an unquoted field"},
  };
  int k = 0;
  for (const Case& c : cases) {
    const fs::path path = tmp.path() / fmt::format("bad{}.csv", k++);
    std::ofstream(path, std::ios::binary) << c.text;
    for (std::size_t block : {16u, 23u, 1u << 20}) {
      try {
        fromFile(path, block);
        ADD_FAILURE() << c.text << " accepted";
      } catch (const InputError& e) {
        EXPECT_EQ(e.where().file, path.string());
        EXPECT_EQ(e.where().line, c.line) << c.text << " block " << block;
        EXPECT_NE(std::string(e.what()).find(c.says), std::string::npos) << e.what();
      }
    }
    // The text in memory says the same.
    try {
      inMemory(c.text);
      ADD_FAILURE() << c.text << " accepted";
    } catch (const InputError& e) {
      EXPECT_EQ(e.where().line, c.line) << c.text;
    }
  }
  try {
    CsvScanner missing(tmp.path() / "missing.csv");
    ADD_FAILURE() << "a missing file opened";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("cannot open"), std::string::npos) << e.what();
  }
}
