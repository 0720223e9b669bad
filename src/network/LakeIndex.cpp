#include "reachwise/network/LakeIndex.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "reachwise/network/Lakes.hpp"

namespace reachwise::network {

namespace {

/// A lake whose box covers more cells than this is kept apart and tested
/// for every point (a few very large lakes must not fill the grid).
constexpr std::size_t kMaxCellsPerLake = 256;

bool onLake(const LakeRecord& lake, Point2 p, double tolerance) {
  // The test linkLakes has always made: inside, or within the tolerance.
  return insideRings(lake.rings, p) || distanceToRings(lake.rings, p) <= tolerance;
}

}  // namespace

LakeIndex::LakeIndex(const LakeTable& lakes, double tolerance) : lakes_(lakes), tolerance_(tolerance) {
  constexpr double inf = std::numeric_limits<double>::infinity();
  const std::size_t n = lakes.lakes.size();
  boxes_.reserve(n);
  double min_x = inf, min_y = inf, max_x = -inf, max_y = -inf;
  std::vector<double> sizes;
  sizes.reserve(n);
  for (const auto& lake : lakes.lakes) {
    Box b{inf, inf, -inf, -inf};
    for (const auto& ring : lake.rings)
      for (const Point2& q : ring) {
        b.min_x = std::min(b.min_x, q.x), b.max_x = std::max(b.max_x, q.x);
        b.min_y = std::min(b.min_y, q.y), b.max_y = std::max(b.max_y, q.y);
      }
    if (b.min_x <= b.max_x) {
      // Widened by the tolerance and a margin far above the rounding of
      // distanceToRings, so the box never turns away a point on the lake.
      // (A point outside the rings' box crosses each closed ring an even
      // number of times, so the inside test cannot pass there.)
      const double scale = std::max({std::abs(b.min_x), std::abs(b.max_x), std::abs(b.min_y), std::abs(b.max_y), 1.0});
      const double w = tolerance * (1 + 1e-9) + 1e-9 * scale;
      b.min_x -= w, b.min_y -= w, b.max_x += w, b.max_y += w;
      min_x = std::min(min_x, b.min_x), max_x = std::max(max_x, b.max_x);
      min_y = std::min(min_y, b.min_y), max_y = std::max(max_y, b.max_y);
      sizes.push_back(std::max(b.max_x - b.min_x, b.max_y - b.min_y));
    }
    boxes_.push_back(b);
  }
  if (sizes.empty()) return;  // no lake with a ring: no point lies on a lake
  // Cells: about 4 per lake over the extent, and no smaller than the
  // median lake, so that a typical lake covers a few cells.
  const double width = max_x - min_x, height = max_y - min_y;
  std::nth_element(sizes.begin(), sizes.begin() + sizes.size() / 2, sizes.end());
  const double cells = 4.0 * static_cast<double>(sizes.size());
  cell_ = std::max({std::sqrt(width * height / cells), std::max(width, height) / cells, sizes[sizes.size() / 2],
                    1e-9 * std::max({std::abs(min_x), std::abs(max_x), std::abs(min_y), std::abs(max_y), 1.0})});
  x0_ = min_x, y0_ = min_y;
  cols_ = static_cast<std::size_t>(width / cell_) + 1;
  rows_ = static_cast<std::size_t>(height / cell_) + 1;
  const auto col = [&](double x) {
    return std::min(cols_ - 1, static_cast<std::size_t>(std::max(0.0, std::floor((x - x0_) / cell_))));
  };
  const auto row = [&](double y) {
    return std::min(rows_ - 1, static_cast<std::size_t>(std::max(0.0, std::floor((y - y0_) / cell_))));
  };
  // Two passes (count, fill): each cell's lakes in table order.
  cell_begin_.assign(cols_ * rows_ + 1, 0);
  for (int pass = 0; pass < 2; ++pass) {
    std::vector<std::uint32_t> fill;
    if (pass == 1) {
      for (std::size_t c = 0; c < cols_ * rows_; ++c) cell_begin_[c + 1] += cell_begin_[c];
      cell_lake_.resize(cell_begin_.back());
      fill.assign(cell_begin_.begin(), cell_begin_.end() - 1);
    }
    for (std::size_t l = 0; l < n; ++l) {
      const Box& b = boxes_[l];
      if (!(b.min_x <= b.max_x)) continue;
      const std::size_t c0 = col(b.min_x), c1 = col(b.max_x), r0 = row(b.min_y), r1 = row(b.max_y);
      if ((c1 - c0 + 1) * (r1 - r0 + 1) > kMaxCellsPerLake) {
        if (pass == 0) large_.push_back(static_cast<std::uint32_t>(l));
        continue;
      }
      for (std::size_t r = r0; r <= r1; ++r)
        for (std::size_t c = c0; c <= c1; ++c) {
          if (pass == 0) ++cell_begin_[r * cols_ + c + 1];
          else cell_lake_[fill[r * cols_ + c]++] = static_cast<std::uint32_t>(l);
        }
    }
  }
}

void LakeIndex::lakesAt(Point2 p, std::vector<std::size_t>& out) const {
  out.clear();
  if (cols_ == 0) return;
  const auto test = [&](std::uint32_t l) {
    const Box& b = boxes_[l];
    if (p.x >= b.min_x && p.x <= b.max_x && p.y >= b.min_y && p.y <= b.max_y &&
        onLake(lakes_.lakes[l], p, tolerance_))
      out.push_back(l);
  };
  const double fx = (p.x - x0_) / cell_, fy = (p.y - y0_) / cell_;
  if (fx >= 0 && fy >= 0 && fx < static_cast<double>(cols_) && fy < static_cast<double>(rows_)) {
    const std::size_t c = static_cast<std::size_t>(fy) * cols_ + static_cast<std::size_t>(fx);
    for (std::uint32_t k = cell_begin_[c]; k < cell_begin_[c + 1]; ++k) test(cell_lake_[k]);
  }
  if (large_.empty()) return;
  const std::size_t from_cells = out.size();
  for (std::uint32_t l : large_) test(l);
  if (from_cells > 0 && out.size() > from_cells) std::sort(out.begin(), out.end());
}

}  // namespace reachwise::network
