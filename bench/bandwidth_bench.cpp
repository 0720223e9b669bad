// Floors for the whole-process scale benchmark (bench/scale.sh): what any
// program moving the same data must spend, on this machine.
//
//   bandwidth_bench copy BYTES        memcpy BYTES through a 256 MB buffer pair
//                                     (the bytes the routing kernel and the
//                                     series move): seconds and GB/s
//   bandwidth_bench ncread FILE VAR   reads VAR(time, reach) of a forcing file
//                                     one reach at a time, as the router pulls
//                                     it (netCDF-C, one chunk per reach)
//
// Not a Google Benchmark fixture: each floor runs once at the size of the
// case it is the floor of, in its own process so /usr/bin/time -v sees it.
#include <fmt/core.h>
#include <netcdf.h>

#include <algorithm>
#include <chrono>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

namespace {

using Clock = std::chrono::steady_clock;

double secondsSince(Clock::time_point t0) {
  return std::chrono::duration<double>(Clock::now() - t0).count();
}

int copy(std::uint64_t bytes) {
  const std::size_t buffer = std::min<std::uint64_t>(bytes, 256ull << 20);
  std::vector<char> a(buffer, 1), b(buffer, 2);  // touched before timing
  const auto t0 = Clock::now();
  std::uint64_t done = 0;
  while (done < bytes) {
    const std::size_t n = static_cast<std::size_t>(std::min<std::uint64_t>(buffer, bytes - done));
    std::memcpy(b.data(), a.data(), n);
    std::swap(a, b);
    done += n;
  }
  const double s = secondsSince(t0);
  // Read + write: a copy of n bytes moves 2n bytes through memory.
  fmt::print("copy: {} bytes in {:.3f} s ({:.2f} GB/s copied, {:.2f} GB/s read+write); check {}\n",
             bytes, s, bytes / s / 1e9, 2 * bytes / s / 1e9, static_cast<int>(a[buffer / 2]));
  return 0;
}

int check(int status, const char* what) {
  if (status != NC_NOERR) {
    fmt::print(stderr, "netCDF: {}: {}\n", what, nc_strerror(status));
    std::exit(1);
  }
  return status;
}

int ncread(const std::string& path, const std::string& name) {
  const auto t0 = Clock::now();
  int ncid = 0, var = 0, dims[2] = {0, 0};
  check(nc_open(path.c_str(), NC_NOWRITE, &ncid), "open");
  check(nc_inq_varid(ncid, name.c_str(), &var), "variable");
  check(nc_inq_vardimid(ncid, var, dims), "dimensions");
  std::size_t steps = 0, reaches = 0;
  check(nc_inq_dimlen(ncid, dims[0], &steps), "time");
  check(nc_inq_dimlen(ncid, dims[1], &reaches), "reach");
  std::vector<double> series(steps);
  double sum = 0;
  for (std::size_t r = 0; r < reaches; ++r) {
    const std::size_t start[2] = {0, r}, count[2] = {steps, 1};
    check(nc_get_vara_double(ncid, var, start, count, series.data()), "read");
    for (double q : series) sum += q;
  }
  nc_close(ncid);
  fmt::print("ncread: {} reaches x {} steps in {:.3f} s (sum {:.6g})\n", reaches, steps,
             secondsSince(t0), sum);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string mode = argc > 1 ? argv[1] : "";
  if (mode == "copy" && argc == 3) return copy(std::strtoull(argv[2], nullptr, 10));
  if (mode == "ncread" && argc == 4) return ncread(argv[2], argv[3]);
  fmt::print(stderr, "usage: bandwidth_bench copy BYTES | ncread FILE VARIABLE\n");
  return 2;
}
