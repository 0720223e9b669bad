#pragma once
/// \file
/// Values of one more field of the layer a ReachTable was read from, per
/// record: the drainage-area field and the class field of `[prepare]`
/// (docs/formats.md, "Preparing attributes").

#include <optional>
#include <string>
#include <vector>

#include "reachwise/network/ReachTable.hpp"

namespace reachwise::io {

/// Per record of `table`, the number in `field` of the feature the record
/// was read from (`table.source`, layer `table.layer`, matched by fid); NaN
/// where null or empty. With `downstream_piece_only`, of the pieces of a
/// line cut by topology only the last (the downstream one) gets the value:
/// for a quantity that holds at the line's downstream end. Throws
/// InputError naming the file, layer and field when the source cannot be
/// opened or has no such field, and the feature too for a value that is
/// not a finite number.
std::vector<double> readReachNumbers(const network::ReachTable& table, const std::string& field,
                                     bool downstream_piece_only);

/// Per record, the text of `field` (integers in decimal, blanks trimmed);
/// nullopt where null or empty. Errors as readReachNumbers.
std::vector<std::optional<std::string>> readReachTexts(const network::ReachTable& table,
                                                       const std::string& field);

}  // namespace reachwise::io
