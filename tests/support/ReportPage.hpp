#pragma once
// Test support: reading a run report's page back (files as text, the
// body rows of a table by id) with the standard library's regex.

#include <filesystem>
#include <fstream>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

namespace testsupport {

inline std::string readText(const std::filesystem::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream s;
  s << in.rdbuf();
  return s.str();
}

/// Cell texts of each body row of the table with this id (tags inside a
/// cell removed, entities left as written).
inline std::vector<std::vector<std::string>> tableRows(const std::string& html, const std::string& id) {
  const auto start = html.find("<table id=\"" + id + "\"");
  if (start == std::string::npos) return {};
  const auto body = html.find("<tbody>", start), end = html.find("</table>", start);
  std::vector<std::vector<std::string>> rows;
  if (body == std::string::npos || body > end) return rows;
  const std::string part = html.substr(body, end - body);
  static const std::regex tr(R"(<tr>(.*?)</tr>)"), td(R"(<td[^>]*>(.*?)</td>)"), tag(R"(<[^>]*>)");
  for (auto r = std::sregex_iterator(part.begin(), part.end(), tr); r != std::sregex_iterator(); ++r) {
    const std::string cells = (*r)[1].str();
    std::vector<std::string> row;
    for (auto c = std::sregex_iterator(cells.begin(), cells.end(), td); c != std::sregex_iterator(); ++c)
      row.push_back(std::regex_replace((*c)[1].str(), tag, " "));
    rows.push_back(row);
  }
  return rows;
}

inline std::string trim(std::string s) {
  const auto a = s.find_first_not_of(" \t\n"), b = s.find_last_not_of(" \t\n");
  return a == std::string::npos ? std::string() : s.substr(a, b - a + 1);
}

}  // namespace testsupport
