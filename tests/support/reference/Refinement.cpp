#include "support/reference/Refinement.hpp"

#include <algorithm>
#include <cmath>

namespace testsupport::reference {

double sampleAt(std::span<const double> q, double dt, double t) {
  const double u = t / dt;
  const auto i = static_cast<std::size_t>(std::floor(u));
  if (i + 1 >= q.size()) return q.back();
  return q[i] + (q[i + 1] - q[i]) * (u - static_cast<double>(i));
}

std::vector<double> cellLengths(double length_m, std::size_t cells, double buffer_m, double growth,
                                double max_cell_m) {
  const double dx0 = length_m / static_cast<double>(cells);
  std::vector<double> dx(cells, dx0);
  const double largest_cell = std::max(dx0, max_cell_m > 0 ? max_cell_m : 1e300);
  for (double covered = 0, d = dx0 * growth; covered < buffer_m; d = std::min(d * growth, largest_cell)) {
    dx.push_back(std::min(d, largest_cell));
    covered += dx.back();
  }
  return dx;
}

FirstGrid firstGrid(const reachwise::hydraulics::Section& section, double length_m,
                    std::span<const double> inflow, double dt_s, double rise_s, const Refinement& refinement) {
  const auto [lo, hi] = std::minmax_element(inflow.begin(), inflow.end());
  double c_max = 0, ell_min = 1e300, ell_max = 0;
  for (int i = 0; i <= 40; ++i) {
    const double q = *lo + (*hi - *lo) * i / 40.0;
    const double y = section.normalDepth(q);
    const double c = section.celerity(y);
    const double ell = q / (2 * section.topWidth(y) * section.bedSlope() * c);  // diffusion length nu / c
    c_max = std::max(c_max, c);
    ell_min = std::min(ell_min, ell);
    ell_max = std::max(ell_max, ell);
  }
  const auto ceil_size = [](double v) { return static_cast<std::size_t>(std::ceil(v)); };
  FirstGrid grid;
  grid.cells = refinement.first_cells
                   ? refinement.first_cells
                   : std::max({std::size_t{10}, ceil_size(16 * length_m / (c_max * rise_s)),
                               ceil_size(length_m / (4 * ell_min))});
  grid.substeps = refinement.first_substeps
                      ? refinement.first_substeps
                      : std::max<std::size_t>(1, ceil_size(c_max * dt_s * grid.cells / length_m));
  grid.buffer_m = std::max(0.5 * length_m, 20 * ell_max);
  grid.max_buffer_cell_m = 2 * ell_min;
  return grid;
}

}  // namespace testsupport::reference
