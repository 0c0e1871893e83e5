// Benchmark of `heads`: N water-level readings (default 1e6) of 200 invented
// wells streamed from CSV to heads.csv and qa.csv, then the same with
// heads.gpkg as well, each in its own process (so that peak memory is its
// own). Prints wall and CPU seconds, readings per second, peak memory and
// the ratios of the two runs (the GeoPackage is written on a second core,
// so wall and CPU differ); writing the input file is not timed.
//
// usage: bench_heads [N]

#include <fmt/format.h>
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <string>
#include <utility>

#include "levelhead/heads/heads.hpp"

using namespace levelhead;
using Clock = std::chrono::steady_clock;

namespace {
double cpu_seconds() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  const auto seconds = [](const timeval& t) { return t.tv_sec + t.tv_usec / 1e6; };
  return seconds(usage.ru_utime) + seconds(usage.ru_stime);
}

double peak_rss_mb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) / 1024.0;
}

double run(const WellSet& wells, const std::vector<MeasuringPointRecord>& records,
           const HeadOptions& options, const std::filesystem::path& levels,
           const std::filesystem::path& out, bool geopackage, std::size_t& readings) {
  const auto start = Clock::now();
  TimeReader times;
  const HeadsResult r = compute_heads(wells, records, {}, {}, ReferenceSet{}, ProjSettings{},
                                      options, times, levels, TableOptions{}, out, geopackage);
  readings = r.summary.readings;
  return std::chrono::duration<double>(Clock::now() - start).count();
}
}  // namespace

int main(int argc, char** argv) {
  const std::filesystem::path folder =
      std::filesystem::temp_directory_path() / "levelhead-bench-heads";
  if (argc == 3 && (std::string(argv[1]) == "--csv" || std::string(argv[1]) == "--gpkg")) {
    const bool geopackage = std::string(argv[1]) == "--gpkg";
    const WellSet wells = read_wells(read_table(folder / "wells.csv"));
    const auto records = read_measuring_points(read_table(folder / "mp.csv"), wells);
    HeadOptions options;
    options.target = "EPSG:5703";
    options.crs = "EPSG:32613";
    options.interpolate = true;
    std::size_t readings = 0;
    const double cpu_before = cpu_seconds();
    const double seconds = run(wells, records, options, folder / "levels.csv",
                               folder / (geopackage ? "out_gpkg" : "out"), geopackage, readings);
    const double cpu = cpu_seconds() - cpu_before;
    fmt::print("{:<22}{:>10}{:>10.2f}{:>10.2f}{:>14.3f}{:>10.0f}\n",
               geopackage ? "CSV + GeoPackage" : "CSV", readings, seconds, cpu,
               readings / seconds / 1e6, peak_rss_mb());
    std::fflush(stdout);
    fmt::print("seconds {:.6f} {:.6f}\n", seconds, cpu);  // read back by the parent
    return 0;
  }
  const std::size_t n = argc > 1 ? std::stoul(argv[1]) : 1000000;
  const std::size_t n_wells = 200;
  std::filesystem::create_directories(folder);
  std::mt19937_64 rng(5);
  std::normal_distribution<double> noise(0.0, 0.2);
  {
    std::ofstream w(folder / "wells.csv"), m(folder / "mp.csv");
    w << "id,x,y\n";
    m << "well,valid_from,height,datum,sigma,reason\n";
    for (std::size_t i = 0; i < n_wells; ++i) {
      w << fmt::format("W{},{},{}\n", i, 500000 + 37 * i, 4400000 + 53 * (i % 17));
      m << fmt::format("W{},2000-01-01,{:.3f},EPSG:5703,0.003,survey\n", i, 100.0 + 0.01 * i);
      m << fmt::format("W{},2015-01-01,{:.3f},EPSG:5703,0.003,resurvey\n", i, 99.98 + 0.01 * i);
    }
    std::ofstream l(folder / "levels.csv");
    l << "well,time,depth\n";
    const auto write = [&](std::ofstream& out, std::size_t count) {
      for (std::size_t k = 0; k < count; ++k) {
        const std::size_t well = k % n_wells;
        const std::size_t step = k / n_wells;  // one reading an hour per well
        const long long seconds = 946684800LL + static_cast<long long>(step) * 3600;
        const long long day = seconds / 86400, rest = seconds % 86400;
        // Dates by day number: cheap, valid ISO 8601 from 2000-01-01 on.
        const auto ymd = std::chrono::year_month_day{std::chrono::sys_days{std::chrono::days{day}}};
        out << fmt::format("W{},{:04d}-{:02d}-{:02d}T{:02d}:00Z,{:.3f}\n", well,
                           static_cast<int>(ymd.year()), static_cast<unsigned>(ymd.month()),
                           static_cast<unsigned>(ymd.day()), rest / 3600, 5.0 + noise(rng));
      }
    };
    write(l, n);
  }
  const std::string self = std::filesystem::canonical("/proc/self/exe").string();
  fmt::print("{:<22}{:>10}{:>10}{:>10}{:>14}{:>10}\n", "heads output", "readings", "wall s",
             "CPU s", "M readings/s", "peak MB");
  std::fflush(stdout);
  const auto time_of = [&](const char* mode) {
    FILE* child = popen(fmt::format("'{}' {} {}", self, mode, n).c_str(), "r");
    char line[256];
    std::pair<double, double> seconds{0.0, 0.0};  // wall, CPU
    while (child && std::fgets(line, sizeof line, child)) {
      if (std::sscanf(line, "seconds %lf %lf", &seconds.first, &seconds.second) != 2)
        std::fputs(line, stdout);
    }
    if (child) pclose(child);
    return seconds;
  };
  const auto csv = time_of("--csv");
  const auto gpkg = time_of("--gpkg");
  fmt::print("GeoPackage run / CSV run: {:.2f} wall, {:.2f} CPU\n", gpkg.first / csv.first,
             gpkg.second / csv.second);
  if (!std::getenv("LEVELHEAD_BENCH_KEEP")) std::filesystem::remove_all(folder);
  return 0;
}
