#pragma once
/// \file
/// A check of the header of a classic-format NetCDF file (CDF-1, CDF-2,
/// CDF-5) before netCDF-C opens it: netCDF-C 4.9.0 accepts a variable of a
/// type the format does not have (the netCDF-4 `string`, 12, in a CDF-2
/// file) and then divides by its size, zero, while opening (SIGFPE in
/// NC_check_vlen, found by fuzzing). The check walks the header as the
/// format specification lays it out (NetCDF Users Guide, "File Format
/// Specifications": dimension, attribute and variable lists, names padded
/// to 4 bytes; 64-bit counts in CDF-5) and looks at every attribute's and
/// variable's type.

#include <cstddef>
#include <cstdint>
#include <optional>
#include <span>
#include <string>

namespace reachwise::io {

/// What is wrong with the classic header in `bytes` (the start of a file):
/// a type the format does not have, named with its variable or attribute,
/// or, when `bytes` is the whole file (`whole_file`), a dimension,
/// attribute or variable count larger than the rest of the file can hold;
/// nullopt when all is right, or when `bytes` is not a classic header or
/// ends before its variable list does (netCDF-C then judges the file
/// itself).
std::optional<std::string> classicHeaderProblem(std::span<const std::uint8_t> bytes, bool whole_file = true);

}  // namespace reachwise::io
