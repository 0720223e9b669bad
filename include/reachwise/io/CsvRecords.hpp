#pragma once
/// \file
/// CSV text split into records (RFC 4180), whatever the records mean.
///
/// Tolerated: a UTF-8 byte-order mark, LF or CRLF line ends, blank lines
/// (skipped), blanks around fields, quoted fields (`""` inside quotes for a
/// quote; a quoted field may span lines).

#include <cstdint>
#include <cstdio>
#include <deque>
#include <filesystem>
#include <functional>
#include <string>
#include <string_view>
#include <vector>

namespace reachwise::io {

/// One CSV record and the 1-based line it starts on.
struct CsvRecord {
  std::vector<std::string> fields;   ///< unquoted, not trimmed
  std::int64_t line = 0;
};

/// Splits CSV text into records (RFC 4180 quoting; a leading BOM dropped;
/// LF or CRLF; empty lines skipped). `file` only names the source in an
/// InputError for an unterminated quote or text after a closing quote.
std::vector<CsvRecord> parseCsvRecords(std::string_view text, const std::string& file);

/// The same, one record at a time: `each` is called with every non-blank
/// record in order; the record (and its strings' storage) is reused for
/// the next one, so a large file costs its text and not a copy of every
/// field.
void forEachCsvRecord(std::string_view text, const std::string& file,
                      const std::function<void(const CsvRecord&)>& each);

/// The same rules, one record at a time, every field a view: of the text,
/// or, for a quoted field with `""` or a CRLF inside, of the field
/// unquoted. Over text in memory, or over a file read a block at a time,
/// so that reading a file costs a block and its longest record, not its
/// size, and no field is copied.
class CsvScanner {
public:
  /// Over `text`, which must outlive the scanner; `file` names it in errors.
  CsvScanner(std::string_view text, std::string file);
  /// Over the file at `path` (named `path.string()` in errors), read in
  /// blocks of `block` bytes (a longer record grows the block). An
  /// InputError when it cannot be opened.
  explicit CsvScanner(const std::filesystem::path& path, std::size_t block = std::size_t{1} << 20);
  ~CsvScanner();
  CsvScanner(const CsvScanner&) = delete;
  CsvScanner& operator=(const CsvScanner&) = delete;

  /// Moves to the next non-blank record; false at the end. An InputError
  /// (file, line) for an unterminated quote, text after a closing quote or
  /// a quote inside an unquoted field, or a file that cannot be read.
  bool next();
  /// The record's fields, unquoted, not trimmed; valid until next().
  const std::vector<std::string_view>& fields() const noexcept { return fields_; }
  /// The 1-based line the record starts on.
  std::int64_t line() const noexcept { return record_line_; }
  const std::string& file() const noexcept { return file_; }

private:
  enum class Parsed { Record, Blank, More };
  Parsed parse();
  bool refill();

  std::string file_;
  std::FILE* stream_ = nullptr;
  std::vector<char> buffer_;         // file mode: the block read
  const char* data_ = nullptr;
  std::size_t size_ = 0, pos_ = 0;
  bool eof_ = false, started_ = false;
  std::int64_t line_ = 1, record_line_ = 0;
  std::vector<std::string_view> fields_;
  std::deque<std::string> unquoted_;  // fields that had to be copied to be unquoted
  std::size_t unquoted_used_ = 0;
};

/// The number that is the whole of `text` (no blanks, no leading '+'), as
/// std::from_chars reads it (chars_format::general, the "C" locale:
/// correctly rounded, so the same double as strtod gives for decimal
/// text); false when `text` is not one whole number, or is out of range.
/// Plain decimals of up to 15 digits (`12`, `0.25`, `4031.5`) take a
/// shorter path with the same result: the digits as an integer divided by
/// a power of ten, both exact in a double, so the one rounding is that of
/// the division (Clinger, W. D. (1990), How to read floating point numbers
/// accurately, PLDI '90, the "fast path").
inline bool parseCsvNumber(std::string_view text, double& out);

/// `field` without the blanks (spaces, tabs) around it.
inline std::string_view trimCsvField(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

namespace detail {
/// parseCsvNumber beyond plain decimals: std::from_chars.
bool parseCsvNumberFromChars(std::string_view text, double& out);
}  // namespace detail

inline bool parseCsvNumber(std::string_view text, double& out) {
  // Powers of ten exact in a double (10^22 is the largest; 15 are needed).
  static constexpr double kPow10[] = {1e0, 1e1, 1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                      1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15};
  const char* p = text.data();
  const char* const end = p + text.size();
  std::uint64_t mantissa = 0;
  const char* const first = p;
  while (p < end && *p >= '0' && *p <= '9') mantissa = mantissa * 10 + static_cast<unsigned>(*p++ - '0');
  const auto whole = p - first;
  if (whole == 0) return detail::parseCsvNumberFromChars(text, out);
  std::ptrdiff_t fraction = 0;
  if (p < end && *p == '.') {
    const char* const point = ++p;
    while (p < end && *p >= '0' && *p <= '9') mantissa = mantissa * 10 + static_cast<unsigned>(*p++ - '0');
    fraction = p - point;
    if (fraction == 0) return detail::parseCsvNumberFromChars(text, out);  // "5."
  }
  // Up to 15 digits: the mantissa is below 10^15 < 2^53, exact in a double.
  if (p != end || whole + fraction > 15) return detail::parseCsvNumberFromChars(text, out);
  out = static_cast<double>(mantissa) / kPow10[fraction];
  return true;
}

}  // namespace reachwise::io
