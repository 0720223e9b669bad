#pragma once
/// \file
/// CSV text split into records (RFC 4180), whatever the records mean.
///
/// Tolerated: a UTF-8 byte-order mark, LF or CRLF line ends, blank lines
/// (skipped), blanks around fields, quoted fields (`""` inside quotes for a
/// quote; a quoted field may span lines).

#include <cstdint>
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

/// `field` without the blanks (spaces, tabs) around it.
std::string_view trimCsvField(std::string_view field);

}  // namespace reachwise::io
