#include "reachwise/io/NetcdfHeader.hpp"

#include <fmt/format.h>

namespace reachwise::io {

namespace {

// Tags and types of the classic format (NetCDF Users Guide, "File Format
// Specifications").
constexpr std::uint64_t kDimensionTag = 0x0A, kVariableTag = 0x0B, kAttributeTag = 0x0C;
constexpr std::uint32_t kMaxClassicType = 6;   // NC_BYTE .. NC_DOUBLE (CDF-1, CDF-2)
constexpr std::uint32_t kMaxCdf5Type = 11;     // .. NC_UINT64 (CDF-5)

/// Reads big-endian integers from the header; every read checks the bounds
/// (a short header ends the walk without a verdict).
class Reader {
public:
  Reader(std::span<const std::uint8_t> bytes, bool wide) : bytes_(bytes), wide_(wide) {}
  bool u32(std::uint32_t& v) {
    if (bytes_.size() - pos_ < 4) return false;
    v = 0;
    for (int k = 0; k < 4; ++k) v = (v << 8) | bytes_[pos_++];
    return true;
  }
  bool u64(std::uint64_t& v) {
    if (bytes_.size() - pos_ < 8) return false;
    v = 0;
    for (int k = 0; k < 8; ++k) v = (v << 8) | bytes_[pos_++];
    return true;
  }
  /// A count (NON_NEG): 32 bits, 64 in CDF-5.
  bool count(std::uint64_t& v) {
    if (wide_) return u64(v);
    std::uint32_t small = 0;
    if (!u32(small)) return false;
    v = small;
    return true;
  }
  bool skip(std::uint64_t n) {
    if (n > bytes_.size() - pos_) return false;
    pos_ += static_cast<std::size_t>(n);
    return true;
  }
  /// A name: its length and its bytes, padded to 4.
  bool name(std::string& out) {
    std::uint64_t n = 0;
    if (!count(n) || n > bytes_.size() - pos_) return false;
    out.assign(reinterpret_cast<const char*>(bytes_.data() + pos_), static_cast<std::size_t>(n));
    return skip(n) && skip((4 - n % 4) % 4);
  }
  /// A list's tag and length: ABSENT is a zero tag and a zero count.
  bool list(std::uint64_t tag, std::uint64_t& n) {
    std::uint32_t t = 0;
    if (!u32(t) || !count(n)) return false;
    return t == tag || (t == 0 && n == 0);
  }
  /// Bytes of the header not read yet.
  std::size_t left() const { return bytes_.size() - pos_; }
  /// Bytes of a count: 4, or 8 in CDF-5.
  std::uint64_t countBytes() const { return wide_ ? 8 : 4; }

private:
  std::span<const std::uint8_t> bytes_;
  std::size_t pos_ = 0;
  bool wide_;
};

std::size_t typeSize(std::uint32_t type) {
  switch (type) {
    case 1: case 2: case 7: return 1;   // byte, char, ubyte
    case 3: case 8: return 2;           // short, ushort
    case 4: case 5: case 9: return 4;   // int, float, uint
    case 6: case 10: case 11: return 8; // double, int64, uint64
    default: return 0;
  }
}

enum class Walk { Fine, Stop };

/// A list of `n` entries of at least `min_bytes` each that the rest of a
/// whole file cannot hold: netCDF-C sizes its tables from the count before
/// it reads an entry, and 4.9.0 crashes in NC_hashmapfree when such an
/// allocation fails (found by fuzzing: 100 million dimensions claimed by a
/// file of 796 bytes).
std::optional<std::string> overlong(const Reader& r, bool whole_file, std::uint64_t n, std::uint64_t min_bytes,
                                    const char* what) {
  if (!whole_file || n <= r.left() / min_bytes) return std::nullopt;
  return fmt::format("the header lists {} {}, more than the {} bytes after that count can hold", n, what, r.left());
}

/// Walks an attribute list; sets `problem` for a type the format lacks.
Walk attributes(Reader& r, std::uint32_t max_type, const std::string& owner, bool whole_file,
                std::optional<std::string>& problem) {
  std::uint64_t n = 0;
  if (!r.list(kAttributeTag, n)) return Walk::Stop;
  // An attribute: its name's length, its type and its value count.
  problem = overlong(r, whole_file, n, 2 * r.countBytes() + 4, ("attributes of " + owner).c_str());
  if (problem) return Walk::Stop;
  for (std::uint64_t a = 0; a < n; ++a) {
    std::string name;
    std::uint32_t type = 0;
    std::uint64_t values = 0;
    if (!r.name(name) || !r.u32(type)) return Walk::Stop;
    if (type < 1 || type > max_type) {
      problem = fmt::format("attribute '{}' of {} has type {}, which this NetCDF format does not have", name,
                            owner, type);
      return Walk::Stop;
    }
    if (!r.count(values)) return Walk::Stop;
    const std::uint64_t size = typeSize(type);
    if (values > UINT64_MAX / size - 4) return Walk::Stop;
    const std::uint64_t bytes = values * size;
    if (!r.skip(bytes) || !r.skip((4 - bytes % 4) % 4)) return Walk::Stop;
  }
  return Walk::Fine;
}

}  // namespace

std::optional<std::string> classicHeaderProblem(std::span<const std::uint8_t> bytes, bool whole_file) {
  if (bytes.size() < 4 || bytes[0] != 'C' || bytes[1] != 'D' || bytes[2] != 'F') return std::nullopt;
  const std::uint8_t version = bytes[3];
  if (version != 1 && version != 2 && version != 5) return std::nullopt;
  const bool cdf5 = version == 5;
  const std::uint32_t max_type = cdf5 ? kMaxCdf5Type : kMaxClassicType;
  Reader r(bytes.subspan(4), cdf5);
  std::optional<std::string> problem;
  std::uint64_t numrecs = 0, n = 0;
  if (!r.count(numrecs) || !r.list(kDimensionTag, n)) return std::nullopt;
  // A dimension: its name's length and its length.
  if ((problem = overlong(r, whole_file, n, 2 * r.countBytes(), "dimensions"))) return problem;
  for (std::uint64_t d = 0; d < n; ++d) {
    std::string name;
    std::uint64_t length = 0;
    if (!r.name(name) || !r.count(length)) return std::nullopt;
  }
  if (attributes(r, max_type, "the file", whole_file, problem) == Walk::Stop) return problem;
  if (!r.list(kVariableTag, n)) return std::nullopt;
  // A variable: its name's length, its dimension count, an attribute list's
  // tag and count, its type, vsize and begin (at least 4 bytes).
  if ((problem = overlong(r, whole_file, n, 4 * r.countBytes() + 12, "variables"))) return problem;
  for (std::uint64_t v = 0; v < n; ++v) {
    std::string name;
    std::uint64_t dims = 0;
    if (!r.name(name) || !r.count(dims)) return std::nullopt;
    if ((problem = overlong(r, whole_file, dims, r.countBytes(), ("dimensions of variable '" + name + "'").c_str())))
      return problem;
    for (std::uint64_t k = 0; k < dims; ++k) {
      std::uint64_t dimid = 0;
      if (!r.count(dimid)) return std::nullopt;
    }
    if (attributes(r, max_type, "variable '" + name + "'", whole_file, problem) == Walk::Stop) return problem;
    std::uint32_t type = 0;
    std::uint64_t vsize = 0, begin = 0;
    if (!r.u32(type)) return std::nullopt;
    if (type < 1 || type > max_type)
      return fmt::format("variable '{}' has type {}, which this NetCDF format does not have", name, type);
    // vsize (a count), then begin: 32 bits in CDF-1, 64 in CDF-2 and CDF-5.
    if (!r.count(vsize)) return std::nullopt;
    if (version == 1) {
      std::uint32_t small = 0;
      if (!r.u32(small)) return std::nullopt;
    } else if (!r.u64(begin)) {
      return std::nullopt;
    }
  }
  return std::nullopt;
}

}  // namespace reachwise::io
