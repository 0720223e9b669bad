#include "reachwise/routing/Peak.hpp"

#include <algorithm>

namespace reachwise::routing {

Peak findPeak(std::span<const double> q) {
  if (q.empty()) return {};
  const auto it = std::max_element(q.begin(), q.end());  // first of equal maxima
  const std::size_t i = static_cast<std::size_t>(it - q.begin());
  Peak p{*it, static_cast<double>(i)};
  if (i == 0 || i + 1 >= q.size()) return p;
  const double a = q[i - 1], b = q[i], c = q[i + 1];
  const double curvature = a - 2 * b + c;  // < 0 at a strict maximum
  if (!(curvature < 0)) return p;
  const double offset = 0.5 * (a - c) / curvature;  // in [-0.5, 0.5]
  p.index = static_cast<double>(i) + offset;
  p.value = b - 0.25 * (a - c) * offset;
  return p;
}

double riseSamples(std::span<const double> q) {
  if (q.empty()) return 0;
  const auto peak = static_cast<std::size_t>(std::max_element(q.begin(), q.end()) - q.begin());
  std::size_t j = peak;
  // Back over the strictly rising samples only: a flat base flow before the
  // rise is not part of it (it had counted, so a storm after a long steady
  // spell had a long "rise").
  while (j > 0 && q[j - 1] < q[j]) --j;
  return static_cast<double>(peak - j);
}

}  // namespace reachwise::routing
