// Benchmark of `transducer`: N records (default 2e6) of invented loggers,
// WELLS absolute sensors (default 1), one per well, and the barometer they
// share, each logging once a minute, their archives one after another; tape
// checks every 30 days. Prints the time of reduce_transducers against
// reading the same records file whole in the same process (the baseline:
// what holding the table as text costs), and the peak memory after each;
// writing the input file is not timed. With many wells the memory shows
// what stays bounded: it grows with the barometer's records and one
// sensor's, not with the archive.
//
// usage: bench_transducer [N] [WELLS]

#include <fmt/format.h>
#include <sys/resource.h>

#include <chrono>
#include <filesystem>
#include <fstream>
#include <random>

#include "levelhead/core/table.hpp"
#include "levelhead/heads/transducer.hpp"

using namespace levelhead;
using Clock = std::chrono::steady_clock;

namespace {
double peak_rss_mb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) / 1024.0;
}

double seconds_since(Clock::time_point start) {
  return std::chrono::duration<double>(Clock::now() - start).count();
}

// ISO 8601 minute `k` after 2025-01-01T00:00 (no zone: the sensors' offset applies).
std::string minute_text(std::size_t k) {
  const long long seconds = 1735689600LL + static_cast<long long>(k) * 60;
  const auto ymd =
      std::chrono::year_month_day{std::chrono::sys_days{std::chrono::days{seconds / 86400}}};
  const long long rest = seconds % 86400;
  return fmt::format("{:04d}-{:02d}-{:02d}T{:02d}:{:02d}", static_cast<int>(ymd.year()),
                     static_cast<unsigned>(ymd.month()), static_cast<unsigned>(ymd.day()),
                     rest / 3600, rest % 3600 / 60);
}
}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::stoul(argv[1]) : 2000000;
  const std::size_t n_wells = argc > 2 ? std::max<std::size_t>(std::stoul(argv[2]), 1) : 1;
  const std::size_t minutes = n / (n_wells + 1);
  const auto folder = std::filesystem::temp_directory_path() / "levelhead-bench-transducer";
  std::filesystem::create_directories(folder);
  std::mt19937_64 rng(11);
  std::normal_distribution<double> air(0.0, 0.3), water(0.0, 0.02);
  {
    std::ofstream wells_csv(folder / "wells.csv"), sensors_csv(folder / "sensors.csv");
    wells_csv << "id,x,y,ground\n";
    sensors_csv << "sensor,kind,well,barometer,hung_depth,range_kpa,sigma,time_zone,x,y,"
                   "elevation\nB1,barometer,,,,,,-06:00,500100,4400000,101.0\n";
    for (std::size_t w = 1; w <= n_wells; ++w) {
      wells_csv << fmt::format("W{},{},4400000,100.0\n", w, 500000 + 10 * w);
      sensors_csv << fmt::format("T{},absolute,W{},B1,12.0,200,0.01,-06:00,,,\n", w, w);
    }
    // Each logger's archive in turn, as loggers are downloaded: the
    // barometer's, then each well's.
    std::ofstream records(folder / "records.csv");
    records << "sensor,time,pressure\n";
    std::vector<double> p_air(minutes);
    for (std::size_t k = 0; k < minutes; ++k) {
      p_air[k] = 101.2 + air(rng);
      records << fmt::format("B1,{},{:.3f}\n", minute_text(k), p_air[k]);
    }
    for (std::size_t w = 1; w <= n_wells; ++w) {
      for (std::size_t k = 0; k < minutes; ++k)
        records << fmt::format("T{},{},{:.3f}\n", w, minute_text(k), p_air[k] + 68.6 + water(rng));
    }
    std::ofstream levels(folder / "levels.csv");
    levels << "well,time,depth\n";
    for (std::size_t w = 1; w <= n_wells; ++w) {
      for (std::size_t k = 0; k < minutes; k += 30 * 1440)
        levels << fmt::format("W{},{}-06:00,5.000\n", w, minute_text(k + 7));
    }
  }
  const WellSet wells = read_wells(read_table(folder / "wells.csv"));
  const Table sensors = read_table(folder / "sensors.csv");
  const Table levels = read_table(folder / "levels.csv");
  const double baseline_mb = peak_rss_mb();

  auto start = Clock::now();
  TimeReader times;
  const TransducerSummary s =
      reduce_transducers(wells, sensors, folder / "records.csv", TableOptions{}, levels,
                         TransducerOptions{}, times, folder / "out");
  const double t_reduce = seconds_since(start);
  const double reduce_mb = peak_rss_mb();

  start = Clock::now();
  const Table whole = read_table(folder / "records.csv");
  const double t_read = seconds_since(start);
  const double read_mb = peak_rss_mb();

  fmt::print(
      "transducer: {} records of {} well sensor(s) and a barometer ({} written) in {:.2f} s "
      "({:.2f} M records/s)\n",
      n, n_wells, s.written, t_reduce, static_cast<double>(n) / t_reduce / 1e6);
  fmt::print(
      "reading the records table whole: {:.2f} s ({} rows); ratio transducer / read {:.2f}\n",
      t_read, whole.row_count(), t_reduce / t_read);
  fmt::print(
      "peak memory: {:.0f} MB before, {:.0f} MB after transducer ({:.0f} bytes/record), "
      "{:.0f} MB after also reading the table whole\n",
      baseline_mb, reduce_mb, (reduce_mb - baseline_mb) * 1048576.0 / static_cast<double>(n),
      read_mb);
  std::filesystem::remove_all(folder);
}
