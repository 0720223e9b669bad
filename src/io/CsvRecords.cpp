#include "reachwise/io/CsvRecords.hpp"

#include <array>
#include <charconv>
#include <cerrno>
#include <cstring>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif

#include <fmt/format.h>

#include "reachwise/Error.hpp"
#include "TextLocation.hpp"

namespace reachwise::io {
namespace {

using detail::textLocation;

bool isBlank(char c) { return c == ' ' || c == '\t'; }
bool isEnd(char c) { return c == ',' || c == '\n' || c == '\r'; }

/// Bytes that end an unquoted field's run of ordinary bytes: the field
/// ends (',' CR LF) or is refused ('"').
constexpr std::array<bool, 256> kStops = [] {
  std::array<bool, 256> t{};
  t[static_cast<unsigned char>(',')] = t[static_cast<unsigned char>('\n')] = true;
  t[static_cast<unsigned char>('\r')] = t[static_cast<unsigned char>('"')] = true;
  return t;
}();

constexpr std::string_view kBom = "\xEF\xBB\xBF";

/// The first stop byte (kStops) at or after `i`, or `n`, one byte at a time.
inline std::size_t findStopBytewise(const char* text, std::size_t i, std::size_t n) {
  while (i < n && !kStops[static_cast<unsigned char>(text[i])]) ++i;
  return i;
}

/// The stop bytes of a record's text found 64 bytes at a time: a bit per
/// byte of a window, so that the next field's end is a shift and a count
/// of trailing zeros, not a pass over its bytes whose length the branch
/// predictor has to guess. (The approach of Langdale, G., Lemire, D.
/// (2019), Parsing gigabytes of JSON per second, VLDB Journal 28, stage 1.)
class StopFinder {
public:
  StopFinder(const char* text, std::size_t n) : text_(text), n_(n), base_(n + 64) {}

  /// The first stop byte at or after `i`, or `n`.
  std::size_t next(std::size_t i) {
#if defined(__SSE2__)
    for (;;) {
      if (i - base_ < 64) {  // i inside the window (i < base_ wraps to a large number)
        const std::uint64_t m = mask_ >> (i - base_);
        if (m != 0) return i + static_cast<std::size_t>(__builtin_ctzll(m));
        i = base_ + 64;
        continue;
      }
      if (i + 64 > n_) return findStopBytewise(text_, i, n_);
      base_ = i;
      mask_ = window(text_ + i);
    }
#else
    return findStopBytewise(text_, i, n_);
#endif
  }

private:
#if defined(__SSE2__)
  static std::uint64_t window(const char* p) {
    const __m128i comma = _mm_set1_epi8(','), lf = _mm_set1_epi8('\n');
    const __m128i cr = _mm_set1_epi8('\r'), quote = _mm_set1_epi8('"');
    std::uint64_t mask = 0;
    for (int k = 0; k < 4; ++k) {
      const __m128i block = _mm_loadu_si128(reinterpret_cast<const __m128i*>(p + 16 * k));
      const __m128i hit = _mm_or_si128(_mm_or_si128(_mm_cmpeq_epi8(block, comma), _mm_cmpeq_epi8(block, lf)),
                                       _mm_or_si128(_mm_cmpeq_epi8(block, cr), _mm_cmpeq_epi8(block, quote)));
      mask |= static_cast<std::uint64_t>(static_cast<unsigned>(_mm_movemask_epi8(hit))) << (16 * k);
    }
    return mask;
  }
#endif

  const char* text_;
  std::size_t n_;
  std::size_t base_;       // the window is text_[base_, base_ + 64)
  std::uint64_t mask_ = 0; // bit k: text_[base_ + k] is a stop byte
};

}  // namespace

CsvScanner::CsvScanner(std::string_view text, std::string file)
    : file_(std::move(file)), data_(text.data()), size_(text.size()), eof_(true) {}

CsvScanner::CsvScanner(const std::filesystem::path& path, std::size_t block) : file_(path.string()) {
  stream_ = std::fopen(path.c_str(), "rb");
  if (!stream_) {
    InputLocation where;
    where.file = file_;
    throw InputError(where, "cannot open the file for reading");
  }
  std::setvbuf(stream_, nullptr, _IONBF, 0);  // the scanner's block is the only buffer
  buffer_.resize(std::max<std::size_t>(block, 16));
  data_ = buffer_.data();
}

CsvScanner::~CsvScanner() {
  if (stream_) std::fclose(stream_);
}

/// Keeps the bytes from pos_ on, then reads more after them; false when
/// nothing more can come (the end of the text or file was reached before).
bool CsvScanner::refill() {
  if (eof_) return false;
  const std::size_t kept = size_ - pos_;
  if (pos_ > 0 && kept > 0) std::memmove(buffer_.data(), buffer_.data() + pos_, kept);
  pos_ = 0;
  size_ = kept;
  if (size_ == buffer_.size()) buffer_.resize(buffer_.size() * 2);  // a record longer than the block
  data_ = buffer_.data();
  const std::size_t got = std::fread(buffer_.data() + size_, 1, buffer_.size() - size_, stream_);
  size_ += got;
  if (got == 0 || got < buffer_.size() - kept) {
    if (std::ferror(stream_)) {
      InputLocation where;
      where.file = file_;
      throw InputError(where, fmt::format("cannot read the file: {}", std::strerror(errno)));
    }
    eof_ = std::feof(stream_) != 0;
  }
  return true;
}

bool CsvScanner::next() {
  if (!started_) {
    started_ = true;
    // Enough bytes to see a byte-order mark.
    while (size_ - pos_ < kBom.size() && refill()) {}
    if (std::string_view(data_ + pos_, size_ - pos_).starts_with(kBom)) pos_ += kBom.size();
  }
  for (;;) {
    if (pos_ >= size_ && !refill()) return false;
    if (pos_ >= size_) continue;  // read nothing yet; refill again (or learn of the end)
    const std::size_t start = pos_;
    const std::int64_t start_line = line_;
    switch (parse()) {
      case Parsed::Record:
        return true;
      case Parsed::Blank:
        continue;
      case Parsed::More:
        pos_ = start;
        line_ = start_line;
        refill();
        continue;
    }
  }
}

/// One record from pos_, by the rules of forEachCsvRecord. More when the
/// bytes read end inside it (never at the end of the text).
CsvScanner::Parsed CsvScanner::parse() {
  const char* const text = data_;
  const std::size_t n = size_;
  std::size_t i = pos_;
  StopFinder stops(text, n);
  fields_.clear();
  unquoted_used_ = 0;
  record_line_ = line_;
  for (;;) {
    std::size_t j = i;
    while (j < n && isBlank(text[j])) ++j;
    if (j >= n && !eof_) return Parsed::More;
    if (j < n && text[j] == '"') {
      const std::int64_t opened = line_;
      bool copy = false;  // "" or CRLF inside: the field is not a plain slice of the text
      std::size_t close = 0;
      for (i = j + 1;; ++i) {
        if (i >= n) {
          if (!eof_) return Parsed::More;
          throw InputError(textLocation(file_, opened), "a quoted field is not closed");
        }
        const char c = text[i];
        if (c == '"') {
          if (i + 1 >= n && !eof_) return Parsed::More;
          if (i + 1 < n && text[i + 1] == '"') {
            copy = true;
            ++i;
            continue;
          }
          close = i;
          ++i;
          break;
        }
        if (c == '\r') {
          if (i + 1 >= n && !eof_) return Parsed::More;
          if (i + 1 < n && text[i + 1] == '\n') copy = true;
        } else if (c == '\n') {
          ++line_;
        }
      }
      if (!copy) {
        fields_.emplace_back(text + j + 1, close - j - 1);
      } else {
        if (unquoted_used_ == unquoted_.size()) unquoted_.emplace_back();
        std::string& field = unquoted_[unquoted_used_++];
        field.clear();
        for (std::size_t k = j + 1; k < close; ++k) {
          if (text[k] == '"') ++k;  // the first of "" (k + 1 < close: the closing quote is not doubled)
          else if (text[k] == '\r' && text[k + 1] == '\n') continue;
          field += text[k];
        }
        fields_.emplace_back(field);
      }
      while (i < n && isBlank(text[i])) ++i;
      if (i >= n && !eof_) return Parsed::More;
      if (i < n && !isEnd(text[i]))
        throw InputError(textLocation(file_, line_), "text after the closing quote of a field");
    } else {
      const std::size_t begin = i;
      i = stops.next(i);
      if (i < n && text[i] == '"')
        throw InputError(textLocation(file_, line_), "a quote inside an unquoted field (quote the whole field)");
      if (i >= n && !eof_) return Parsed::More;
      fields_.emplace_back(text + begin, i - begin);
    }
    if (i < n && text[i] == ',') {
      ++i;
      continue;
    }
    if (i < n && text[i] == '\r') {
      if (i + 1 >= n && !eof_) return Parsed::More;
      ++i;
    }
    if (i < n && text[i] == '\n') ++i;
    ++line_;
    break;
  }
  pos_ = i;
  const bool blank = fields_.size() == 1 && trimCsvField(fields_[0]).empty();
  return blank ? Parsed::Blank : Parsed::Record;
}

bool detail::parseCsvNumberFromChars(std::string_view text, double& out) {
  double value = 0;
  const auto [stop, ec] = std::from_chars(text.data(), text.data() + text.size(), value);
  if (ec != std::errc{} || stop != text.data() + text.size()) return false;
  out = value;
  return true;
}

void forEachCsvRecord(std::string_view text, const std::string& file,
                      const std::function<void(const CsvRecord&)>& each) {
  CsvScanner scanner(text, file);
  CsvRecord record;
  while (scanner.next()) {
    const auto& fields = scanner.fields();
    record.line = scanner.line();
    record.fields.resize(fields.size());  // the strings beyond are dropped, those kept reused
    for (std::size_t k = 0; k < fields.size(); ++k) record.fields[k].assign(fields[k]);
    each(record);
  }
}

std::vector<CsvRecord> parseCsvRecords(std::string_view text, const std::string& file) {
  std::vector<CsvRecord> out;
  forEachCsvRecord(text, file, [&](const CsvRecord& r) { out.push_back(r); });
  return out;
}

}  // namespace reachwise::io
