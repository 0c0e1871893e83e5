// Benchmark of height conversion: 1e6 points through the EGM96 geoid grid
// (EPSG:4979 -> EPSG:4326+5773), levelhead's VerticalTransformer against
// PROJ's own `cct` running the same operation on the same points, in the
// same run. Prints both times, the ratio, and the largest difference. Then
// `levelhead convert` end to end on the same points as a CSV table, its CPU
// time against cct's (both child processes, text in and out, the least of
// three interleaved runs each) and its peak memory.
//
// usage: bench_convert [N]   (default 1000000)

#include <fmt/format.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>

#include "levelhead/references/vertical_reference.hpp"

using namespace levelhead;
using Clock = std::chrono::steady_clock;

namespace {

struct ChildRun {
  double cpu_seconds = 0.0, peak_mb = 0.0;
  bool ok = false;
};

// Runs `sh -c command` and returns its CPU time (user + system) and peak memory.
ChildRun run_child(const std::string& command) {
  std::vector<std::string> args = {"/bin/sh", "-c", command};
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);
  pid_t child = 0;
  ChildRun r;
  if (posix_spawn(&child, argv[0], nullptr, nullptr, argv.data(), environ) != 0) return r;
  int status = 0;
  rusage usage{};
  wait4(child, &status, 0, &usage);
  r.cpu_seconds = static_cast<double>(usage.ru_utime.tv_sec + usage.ru_stime.tv_sec) +
                  1e-6 * static_cast<double>(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
  r.peak_mb = static_cast<double>(usage.ru_maxrss) / 1024.0;
  r.ok = WIFEXITED(status) && WEXITSTATUS(status) == 0;
  return r;
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::stoul(argv[1]) : 1000000;
  std::mt19937_64 rng(7);
  std::uniform_real_distribution<double> lon(-180.0, 180.0), lat(-80.0, 80.0), h(-50.0, 3000.0);
  std::vector<PlanePoint> points(n);
  std::vector<double> heights(n);
  for (std::size_t i = 0; i < n; ++i) {
    points[i] = {lon(rng), lat(rng)};
    heights[i] = h(rng);
  }

  auto start = Clock::now();
  VerticalTransformer t("EPSG:4979", "EPSG:4326+5773", "EPSG:4326", ProjSettings{});
  const double setup = std::chrono::duration<double>(Clock::now() - start).count();
  start = Clock::now();
  const auto results = t.convert(points, heights);
  const double ours = std::chrono::duration<double>(Clock::now() - start).count();

  // The same operation for cct (it takes latitude, longitude in EPSG order).
  const std::string pipeline = t.operations().front().pipeline;
  const auto folder = std::filesystem::temp_directory_path() / "levelhead-bench-convert";
  std::filesystem::create_directories(folder);
  {
    std::ofstream in(folder / "in.txt");
    for (std::size_t i = 0; i < n; ++i) {
      in << fmt::format("{:.9f} {:.9f} {:.9f}\n", points[i].y, points[i].x, heights[i]);
    }
  }
  start = Clock::now();
  const std::string command =
      fmt::format("cct -d 6 {} '{}' > '{}'", pipeline, (folder / "in.txt").string(),
                  (folder / "out.txt").string());
  const int status = std::system(command.c_str());
  const double cct = std::chrono::duration<double>(Clock::now() - start).count();
  if (status != 0) {
    fmt::print("cct failed ({}); is proj-bin installed?\n", status);
    return 1;
  }
  std::ifstream out(folder / "out.txt");
  double worst = 0.0;
  std::string line;
  for (std::size_t i = 0; i < n && std::getline(out, line); ++i) {
    std::istringstream fields(line);
    double a, b, z;
    fields >> a >> b >> z;
    if (results[i].height) worst = std::max(worst, std::abs(z - *results[i].height));
  }
  {
    std::ofstream table(folder / "points.csv");
    table << "id,x,y,height\n";
    for (std::size_t i = 0; i < n; ++i) {
      table << fmt::format("P{},{:.9f},{:.9f},{:.9f}\n", i, points[i].x, points[i].y, heights[i]);
    }
  }
  // Interleaved, the least CPU of three each: one run of either swings by
  // a third on a shared machine.
  const std::string cli_command = fmt::format(
      "'{}' convert --from EPSG:4979 --to EPSG:4326+5773 --in '{}' --out '{}' --quiet",
      LEVELHEAD_CLI_PATH, (folder / "points.csv").string(), (folder / "converted.csv").string());
  ChildRun cct_run, cli_run;
  for (int round = 0; round < 3; ++round) {
    const ChildRun c = run_child(command), l = run_child(cli_command);
    if (round == 0 || c.cpu_seconds < cct_run.cpu_seconds) cct_run = c;
    if (round == 0 || l.cpu_seconds < cli_run.cpu_seconds) cli_run = l;
    if (!c.ok || !l.ok) {
      cct_run.ok = c.ok;
      cli_run.ok = l.ok;
      break;
    }
  }
  std::filesystem::remove_all(folder);
  fmt::print("{} points through {}\n", n, t.operations().front().name);
  fmt::print("levelhead: {:.3f} s ({:.2f} M points/s; setup {:.3f} s)\n", ours, n / ours / 1e6,
             setup);
  fmt::print("cct:       {:.3f} s ({:.2f} M points/s, text in and out)\n", cct, n / cct / 1e6);
  fmt::print("cct / levelhead time = {:.2f}; largest difference {:.1e} m (cct prints 6 decimals)\n",
             cct / ours, worst);
  if (!cct_run.ok || !cli_run.ok) {
    fmt::print("a child run failed (cct {}, levelhead convert {})\n", cct_run.ok, cli_run.ok);
    return 1;
  }
  fmt::print(
      "end to end, CPU: levelhead convert {:.2f} s (peak {:.0f} MB), cct {:.2f} s (peak {:.0f} "
      "MB); levelhead / cct = {:.2f}\n",
      cli_run.cpu_seconds, cli_run.peak_mb, cct_run.cpu_seconds, cct_run.peak_mb,
      cli_run.cpu_seconds / cct_run.cpu_seconds);
  return 0;
}
