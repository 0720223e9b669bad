#include "reachwise/io/CsvRecords.hpp"

#include "reachwise/Error.hpp"
#include "TextLocation.hpp"

namespace reachwise::io {
namespace {

using detail::textLocation;

bool isBlank(char c) { return c == ' ' || c == '\t'; }
bool isEnd(char c) { return c == ',' || c == '\n' || c == '\r'; }

}  // namespace

std::string_view trimCsvField(std::string_view s) {
  while (!s.empty() && isBlank(s.front())) s.remove_prefix(1);
  while (!s.empty() && isBlank(s.back())) s.remove_suffix(1);
  return s;
}

void forEachCsvRecord(std::string_view text, const std::string& file,
                      const std::function<void(const CsvRecord&)>& each) {
  if (text.starts_with("\xEF\xBB\xBF")) text.remove_prefix(3);
  CsvRecord record;
  std::int64_t line = 1;
  std::size_t i = 0;
  const std::size_t n = text.size();
  while (i < n) {
    record.line = line;
    std::size_t used = 0;  // fields of this record; the strings beyond are kept for reuse
    for (;;) {
      if (used == record.fields.size()) record.fields.emplace_back();
      std::string& field = record.fields[used++];
      field.clear();
      std::size_t j = i;
      while (j < n && isBlank(text[j])) ++j;
      if (j < n && text[j] == '"') {
        const std::int64_t opened = line;
        for (i = j + 1;; ++i) {
          if (i >= n) throw InputError(textLocation(file, opened), "a quoted field is not closed");
          if (text[i] == '"') {
            if (i + 1 < n && text[i + 1] == '"') {
              field += '"';
              ++i;
              continue;
            }
            ++i;
            break;
          }
          if (text[i] == '\r' && i + 1 < n && text[i + 1] == '\n') continue;
          if (text[i] == '\n') ++line;
          field += text[i];
        }
        while (i < n && isBlank(text[i])) ++i;
        if (i < n && !isEnd(text[i]))
          throw InputError(textLocation(file, line), "text after the closing quote of a field");
      } else {
        for (; i < n && !isEnd(text[i]); ++i) {
          if (text[i] == '"')
            throw InputError(textLocation(file, line),
                             "a quote inside an unquoted field (quote the whole field)");
          field += text[i];
        }
      }
      if (i < n && text[i] == ',') {
        ++i;
        continue;
      }
      if (i < n && text[i] == '\r') ++i;
      if (i < n && text[i] == '\n') ++i;
      ++line;
      break;
    }
    record.fields.resize(used);
    const bool blank = used == 1 && trimCsvField(record.fields[0]).empty();
    if (!blank) each(record);
  }
}

std::vector<CsvRecord> parseCsvRecords(std::string_view text, const std::string& file) {
  std::vector<CsvRecord> out;
  forEachCsvRecord(text, file, [&](const CsvRecord& r) { out.push_back(r); });
  return out;
}

}  // namespace reachwise::io
