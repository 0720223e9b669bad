#pragma once
// Test support: forecast-ensemble members made from the sample network's
// storm (sample-network/inflow.csv), each scaled by its own factor.

#include <cstddef>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace testsupport {

/// Writes `dir`/`prefix`<k>.csv for each factors[k]: the sample inflow with
/// every discharge times factors[k] (printed with 17 significant digits).
/// Member `bad` (if any) has one discharge above the largest the reader
/// takes: R41 (the last column) at line 21 of its file.
inline void writeScaledMembers(const std::filesystem::path& dir, const std::vector<double>& factors,
                               const std::string& prefix = "m", int bad = -1) {
  std::filesystem::create_directories(dir);
  std::ifstream in(REACHWISE_SOURCE_DIR "/sample-network/inflow.csv");
  std::vector<std::string> lines;
  for (std::string l; std::getline(in, l);) lines.push_back(l);
  for (std::size_t k = 0; k < factors.size(); ++k) {
    std::ofstream out(dir / (prefix + std::to_string(k) + ".csv"));
    out.precision(17);
    out << lines[0] << '\n';
    for (std::size_t r = 1; r < lines.size(); ++r) {
      std::stringstream cells(lines[r]);
      std::string cell;
      std::getline(cells, cell, ',');
      std::ostringstream row;
      row.precision(17);
      row << cell;
      while (std::getline(cells, cell, ',')) row << ',' << std::stod(cell) * factors[k];
      std::string text = row.str();
      if (static_cast<int>(k) == bad && r == 20) text = text.substr(0, text.rfind(',')) + ",1e200";
      out << text << '\n';
    }
  }
}

}  // namespace testsupport
