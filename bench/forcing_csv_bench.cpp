// The forcing CSV reader alone: bytes read per second and peak memory.
// A plain program (not a Google Benchmark: one large file, read once, with
// the process's peak RSS), driven by bench/forcing_csv.sh:
//
//   forcing_csv_bench write wide|long PATH [COLUMNS] [ROWS]
//       writes a storm hydrograph per reach (default 50,000 reaches × 720
//       hourly rows), wide form `time,R0,R1,...` or long form
//       `reach_id,time,discharge` (docs/formats.md, "Forcing input");
//       values in m³/s with two decimals, printed in their shortest form.
//   forcing_csv_bench read PATH
//       reads PATH as the inflow of a run (io::readForcingCsv: the file
//       read, checked and put on the run's axis, as `route` does) and prints
//       one line: bytes, wall seconds, MB/s, CPU seconds (user + system,
//       getrusage) and MB per CPU second (the speed per core, less
//       sensitive to a busy machine), series, values, decoded MB (values ×
//       8 bytes), peak RSS MB (getrusage) and peak RSS / decoded.
#include <sys/resource.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

#include <fmt/format.h>

#include "reachwise/io/ForcingCsv.hpp"
#include "reachwise/io/IsoTime.hpp"

namespace {

/// A smooth storm hydrograph: base flow plus a gamma-shaped wave whose peak
/// and timing vary with the reach (deterministic, no random generator).
double storm(std::size_t reach, std::size_t k) {
  const double peak = 5.0 + static_cast<double>((reach * 7919) % 1000) / 10.0;
  const double tp = 24.0 + static_cast<double>((reach * 104729) % 48);
  const double x = static_cast<double>(k) / tp;
  const double wave = x <= 0 ? 0.0 : std::pow(x * std::exp(1.0 - x), 4.0);
  return std::round((0.5 + peak * wave) * 100.0) / 100.0;
}

int write(const std::string& form, const std::string& path, std::size_t columns, std::size_t rows) {
  std::FILE* f = std::fopen(path.c_str(), "wb");
  if (!f) {
    fmt::print(stderr, "cannot write {}\n", path);
    return 1;
  }
  const std::int64_t t0 = 1777593600;  // 2026-05-01T00:00:00Z
  std::string line;
  if (form == "wide") {
    line = "time";
    for (std::size_t c = 0; c < columns; ++c) fmt::format_to(std::back_inserter(line), ",R{}", c);
    line += '\n';
    std::fwrite(line.data(), 1, line.size(), f);
    for (std::size_t k = 0; k < rows; ++k) {
      line = reachwise::io::formatIsoTime(t0 + static_cast<std::int64_t>(k) * 3600, 0);
      for (std::size_t c = 0; c < columns; ++c) fmt::format_to(std::back_inserter(line), ",{}", storm(c, k));
      line += '\n';
      std::fwrite(line.data(), 1, line.size(), f);
    }
  } else {
    std::fputs("reach_id,time,discharge\n", f);
    for (std::size_t c = 0; c < columns; ++c) {
      line.clear();
      for (std::size_t k = 0; k < rows; ++k)
        fmt::format_to(std::back_inserter(line), "R{},{},{}\n", c,
                       reachwise::io::formatIsoTime(t0 + static_cast<std::int64_t>(k) * 3600, 0), storm(c, k));
      std::fwrite(line.data(), 1, line.size(), f);
    }
  }
  return std::fclose(f) == 0 ? 0 : 1;
}

/// CPU seconds (user + system) this process has used so far.
double cpuSeconds(const rusage& u) {
  return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
         static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec) / 1e6;
}

int read(const std::string& path) {
  const auto bytes = std::filesystem::file_size(path);
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  const double cpu_start = cpuSeconds(usage);
  const auto start = std::chrono::steady_clock::now();
  const reachwise::io::Forcing forcing = reachwise::io::readForcingCsv(path, std::nullopt);
  const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  getrusage(RUSAGE_SELF, &usage);
  const double cpu = cpuSeconds(usage) - cpu_start;
  std::size_t values = 0;
  for (const auto& entry : forcing.inflow) values += entry.second.size();
  const double rss_mb = static_cast<double>(usage.ru_maxrss) / 1024.0;  // ru_maxrss is in KiB on Linux
  const double decoded_mb = static_cast<double>(values) * 8.0 / (1024.0 * 1024.0);
  fmt::print("bytes {} seconds {:.3f} MB/s {:.1f} cpu_seconds {:.3f} MB/cpu-s {:.1f} series {} values {} "
             "decoded_MB {:.1f} peak_RSS_MB {:.1f} RSS/decoded {:.2f}\n",
             bytes, s, static_cast<double>(bytes) / 1e6 / s, cpu, static_cast<double>(bytes) / 1e6 / cpu,
             forcing.inflow.size(), values, decoded_mb, rss_mb, rss_mb / decoded_mb);
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string usage =
      "usage: forcing_csv_bench write wide|long PATH [COLUMNS] [ROWS]\n"
      "       forcing_csv_bench read PATH\n";
  if (argc >= 4 && std::string(argv[1]) == "write") {
    const std::size_t columns = argc > 4 ? std::strtoull(argv[4], nullptr, 10) : 50000;
    const std::size_t rows = argc > 5 ? std::strtoull(argv[5], nullptr, 10) : 720;
    return write(argv[2], argv[3], columns, rows);
  }
  if (argc == 3 && std::string(argv[1]) == "read") return read(argv[2]);
  std::fputs(usage.c_str(), stderr);
  return 2;
}
