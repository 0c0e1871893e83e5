// Benchmark of `adjust` on two shapes of invented network:
//   national: a grid of junctions joined by long lines of benchmarks (most
//             points of degree 2), the shape of regional levelling networks;
//   mesh:     a dense 2D monitoring grid, the worst case for fill.
// Each case runs in its own process (so peak memory is its own), with the
// allocator settings the CLI uses on large inputs, and prints the time of
// every stage: writing is not timed; reading the two CSV tables, assembly,
// ordering (symbolic analysis), factorisation, solve, sigmas (selected
// inverse + residual statistics), nnz(L), the factorisation's flops, the
// factor's layout (sn: supernodal, simp: simplicial) and the peak resident
// memory.
// A dense solution of a small network is timed in the same process as the
// sparse one and reported as a ratio, since machines are noisy.
//
// usage: bench_adjust            run the standard set (1e4, 1e5, 1e6 points)
//        bench_adjust --quick    1e4 and 1e5 only
//        bench_adjust --case national|mesh N
//        bench_adjust --dense N  sparse vs dense ratio on a random network
//        bench_adjust --solvers  Eigen SimplicialLDLT vs CHOLMOD factorisation
//        bench_adjust --loops    loop finding on the same shapes
//        bench_adjust --read N   reading a national network's tables alone
//        bench_adjust --cli national|mesh N
//                                `levelhead adjust` end to end (its CPU
//                                and wall time, peak memory) against one
//                                general-purpose sparse solve of the same
//                                normal equations in this process

#include <fmt/format.h>
#include <gdal.h>
#include <ogr_api.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>

#include <Eigen/Dense>
#include <Eigen/SparseCholesky>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <stdexcept>
#include <string>
#include <unordered_map>

#include "adjust/normal_solver.hpp"
#include "cli/large_pages.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/levelling/adjustment.hpp"
#include "levelhead/levelling/loops.hpp"
#include "support/synthetic_networks.hpp"

using namespace levelhead;
using Clock = std::chrono::steady_clock;

namespace {

double seconds_since(Clock::time_point t) {
  return std::chrono::duration<double>(Clock::now() - t).count();
}

double peak_rss_mb() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) / 1024.0;
}

void write_csv(const testing::SyntheticNetwork& net, const std::filesystem::path& folder) {
  std::ofstream points(folder / "points.csv");
  points << "id,x,y,height,sigma\n";
  for (const Point& p : net.points) {
    points << p.id << ',' << fmt::format("{:.1f},{:.1f},", *p.x, *p.y)
           << (p.height ? fmt::format("{:.5f}", *p.height) : "") << ",\n";
  }
  std::ofstream sections(folder / "sections.csv");
  sections << "from,to,dh,length\n";
  for (const Section& s : net.sections) {
    sections << s.from << ',' << s.to << ',' << fmt::format("{:.5f},{:.1f}\n", s.dh, *s.length);
  }
}

testing::SyntheticNetwork make_shape(const std::string& shape, std::size_t n) {
  return shape == "mesh" ? testing::mesh_network(n, 42) : testing::national_network(n, 20, 42);
}

int run_case(const std::string& shape, std::size_t n) {
  const std::filesystem::path folder =
      std::filesystem::temp_directory_path() / fmt::format("levelhead-bench-{}-{}", shape, n);
  std::filesystem::create_directories(folder);
  std::size_t n_points = 0, n_sections = 0;
  {  // generated and written, then freed: the timed part starts from files only
    const testing::SyntheticNetwork synthetic = make_shape(shape, n);
    write_csv(synthetic, folder);
    n_points = synthetic.points.size();
    n_sections = synthetic.sections.size();
  }

  const auto start = Clock::now();
  Network net = make_network(read_points(read_table(folder / "points.csv")),
                             read_sections(read_table(folder / "sections.csv")));
  const double read_seconds = seconds_since(start);
  AdjustmentOptions options;
  options.max_factor_nonzeros = 1e9;
  const AdjustmentResult r = adjust(net, options);
  const double total = seconds_since(start);
  if (!std::getenv("LEVELHEAD_BENCH_KEEP")) std::filesystem::remove_all(folder);

  const AdjustmentTimings& t = r.timings;
  fmt::print(
      "{:<9}{:>9}{:>9}{:>8.2f}{:>8.2f}{:>8.2f}{:>8.2f}{:>8.2f}{:>8.2f}{:>8.2f}{:>9.3g}{:>9.3g}"
      "{:>5}{:>9.0f}   sigma0 {:.3f}\n",
      shape, n_points, n_sections, read_seconds, t.assembly, t.ordering, t.factorisation, t.solve,
      t.sigmas, total, r.factor_nonzeros, r.factor_flops, r.supernodal ? "sn" : "simp",
      peak_rss_mb(), r.sigma0.value_or(0.0));
  return 0;
}

// Normal equations of the heights themselves (not corrections), weighted by
// length as the adjustment's default does; fixed points moved to the right side.
struct NormalEquations {
  std::vector<Eigen::Triplet<double, int>> lower;
  Eigen::VectorXd rhs;
};

NormalEquations assemble(const Network& net) {
  std::vector<int> unknown(net.points.size(), -1);
  int m = 0;
  for (std::size_t i = 0; i < net.points.size(); ++i) {
    if (!net.points[i].is_fixed()) unknown[i] = m++;
  }
  NormalEquations out;
  out.rhs = Eigen::VectorXd::Zero(m);
  for (std::size_t s = 0; s < net.sections.size(); ++s) {
    const double sigma =
        AdjustmentOptions{}.mm_per_sqrt_km * 1e-3 * std::sqrt(*net.sections[s].length / 1000.0);
    const double p = 1.0 / (sigma * sigma);
    const int f = unknown[net.from_index[s]], t = unknown[net.to_index[s]];
    double l = net.sections[s].dh;
    if (f < 0) l += *net.points[net.from_index[s]].height;
    if (t < 0) l -= *net.points[net.to_index[s]].height;
    if (f >= 0) out.lower.emplace_back(f, f, p), out.rhs[f] -= p * l;
    if (t >= 0) out.lower.emplace_back(t, t, p), out.rhs[t] += p * l;
    if (f >= 0 && t >= 0) out.lower.emplace_back(std::max(f, t), std::min(f, t), -p);
  }
  return out;
}

// Factorisation alone, same matrix, same process: Eigen's SimplicialLDLT with
// AMD against CHOLMOD as the adjustment uses it (analysis and factorisation,
// supernodal or simplicial as CHOLMOD chooses).
int run_solver_comparison() {
  fmt::print("{:<9}{:>9}{:>14}{:>14}{:>10}\n", "shape", "points", "Eigen LDLT s", "CHOLMOD s",
             "ratio");
  for (const auto& [shape, n] : {std::pair{"national", 100000}, std::pair{"national", 1000000},
                                 std::pair{"mesh", 100000}, std::pair{"mesh", 1000000}}) {
    testing::SyntheticNetwork synthetic = make_shape(shape, n);
    const Network net = make_network(std::move(synthetic.points), std::move(synthetic.sections));
    const NormalEquations normal = assemble(net);
    const auto m = static_cast<int>(normal.rhs.size());
    detail::NormalSolver::LowerMatrix N(m, m);
    N.setFromTriplets(normal.lower.begin(), normal.lower.end());
    N.makeCompressed();

    auto start = Clock::now();
    Eigen::SimplicialLDLT<Eigen::SparseMatrix<double, Eigen::ColMajor, int>, Eigen::Lower,
                          Eigen::AMDOrdering<int>>
        eigen(N);
    const double eigen_seconds = seconds_since(start);
    start = Clock::now();
    detail::NormalSolver cholmod(N, detail::SolverLimits{1e9});
    const double cholmod_seconds = seconds_since(start);
    const Eigen::VectorXd difference = eigen.solve(normal.rhs) - cholmod.solve(normal.rhs);
    fmt::print("{:<9}{:>9}{:>14.3f}{:>14.3f}{:>10.2f}   (solutions differ by {:.1e} m)\n", shape,
               net.points.size(), eigen_seconds, cholmod_seconds, eigen_seconds / cholmod_seconds,
               difference.cwiseAbs().maxCoeff());
  }
  return 0;
}

// The normal equations read with general-purpose tools: both tables through
// GDAL's CSV driver, ids matched in a hash map.
NormalEquations read_with_gdal(const std::filesystem::path& folder) {
  GDALAllRegister();
  const auto open = [](const std::filesystem::path& path) {
    GDALDatasetH ds = GDALOpenEx(path.string().c_str(), GDAL_OF_VECTOR, nullptr, nullptr, nullptr);
    if (!ds) throw std::runtime_error("GDAL cannot open " + path.string());
    return ds;
  };
  std::unordered_map<std::string, int> unknown;
  std::unordered_map<std::string, double> fixed;
  GDALDatasetH points = open(folder / "points.csv");
  OGRLayerH layer = GDALDatasetGetLayer(points, 0);
  OGRFeatureDefnH defn = OGR_L_GetLayerDefn(layer);
  const int id = OGR_FD_GetFieldIndex(defn, "id"), height = OGR_FD_GetFieldIndex(defn, "height");
  for (OGRFeatureH f; (f = OGR_L_GetNextFeature(layer)) != nullptr; OGR_F_Destroy(f)) {
    const std::string name = OGR_F_GetFieldAsString(f, id);
    if (*OGR_F_GetFieldAsString(f, height) != '\0')  // GDAL reads CSV fields as text
      fixed.emplace(name, OGR_F_GetFieldAsDouble(f, height));
    else
      unknown.emplace(name, static_cast<int>(unknown.size()));
  }
  GDALClose(points);

  NormalEquations out;
  out.rhs = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(unknown.size()));
  GDALDatasetH sections = open(folder / "sections.csv");
  layer = GDALDatasetGetLayer(sections, 0);
  defn = OGR_L_GetLayerDefn(layer);
  const int from = OGR_FD_GetFieldIndex(defn, "from"), to = OGR_FD_GetFieldIndex(defn, "to");
  const int dh = OGR_FD_GetFieldIndex(defn, "dh"), length = OGR_FD_GetFieldIndex(defn, "length");
  const double mm_per_sqrt_km = AdjustmentOptions{}.mm_per_sqrt_km;
  for (OGRFeatureH f; (f = OGR_L_GetNextFeature(layer)) != nullptr; OGR_F_Destroy(f)) {
    const std::string a = OGR_F_GetFieldAsString(f, from), b = OGR_F_GetFieldAsString(f, to);
    const double sigma =
        mm_per_sqrt_km * 1e-3 * std::sqrt(OGR_F_GetFieldAsDouble(f, length) / 1000.0);
    const double p = 1.0 / (sigma * sigma);
    double l = OGR_F_GetFieldAsDouble(f, dh);
    const auto fa = unknown.find(a), fb = unknown.find(b);
    const int ua = fa == unknown.end() ? -1 : fa->second;
    const int ub = fb == unknown.end() ? -1 : fb->second;
    if (ua < 0) l += fixed.at(a);
    if (ub < 0) l -= fixed.at(b);
    if (ua >= 0) out.lower.emplace_back(ua, ua, p), out.rhs[ua] -= p * l;
    if (ub >= 0) out.lower.emplace_back(ub, ub, p), out.rhs[ub] += p * l;
    if (ua >= 0 && ub >= 0) out.lower.emplace_back(std::max(ua, ub), std::min(ua, ub), -p);
  }
  GDALClose(sections);
  return out;
}

// One general-purpose sparse solve: Eigen's SimplicialLDLT with AMD
// ordering, factorisation and one solution, no sigma.
Eigen::VectorXd general_purpose_solve(const NormalEquations& normal) {
  const auto m = static_cast<int>(normal.rhs.size());
  detail::NormalSolver::LowerMatrix N(m, m);
  N.setFromTriplets(normal.lower.begin(), normal.lower.end());
  N.makeCompressed();
  Eigen::SimplicialLDLT<Eigen::SparseMatrix<double, Eigen::ColMajor, int>, Eigen::Lower,
                        Eigen::AMDOrdering<int>>
      solver(N);
  return solver.solve(normal.rhs);
}

double cpu_seconds(const rusage& usage) {
  return static_cast<double>(usage.ru_utime.tv_sec + usage.ru_stime.tv_sec) +
         1e-6 * static_cast<double>(usage.ru_utime.tv_usec + usage.ru_stime.tv_usec);
}

double own_cpu_seconds() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return cpu_seconds(usage);
}

// `levelhead adjust` on the shape's tables as a child process (every height's
// sigma, every residual's test, the tables written), against two anchors in
// this process: one general-purpose sparse solve of the same normal
// equations held in memory, and the same solve after reading the tables
// with GDAL's CSV driver. The CLI's CPU time (both cores counted) and its
// wall time are given as ratios to the anchors' CPU time (single-threaded).
int run_cli_against_anchor(const std::string& shape, std::size_t n) {
  const std::filesystem::path folder =
      std::filesystem::temp_directory_path() / fmt::format("levelhead-bench-cli-{}-{}", shape, n);
  std::filesystem::create_directories(folder);
  NormalEquations normal;
  std::size_t n_points = 0;
  {
    testing::SyntheticNetwork synthetic = make_shape(shape, n);
    write_csv(synthetic, folder);
    n_points = synthetic.points.size();
    normal = assemble(make_network(std::move(synthetic.points), std::move(synthetic.sections)));
  }
  const std::string points = (folder / "points.csv").string();
  const std::string sections = (folder / "sections.csv").string();
  const std::string out = (folder / "out").string();
  std::vector<std::string> args = {
      LEVELHEAD_CLI_PATH,      "adjust", "--points", points, "--sections", sections, "--out", out,
      "--max-factor-nonzeros", "1e9",    "--quiet"};
  std::vector<char*> argv;
  for (std::string& a : args) argv.push_back(a.data());
  argv.push_back(nullptr);

  // The three back to back, three times; the least time of each counts, as
  // the one least disturbed by the rest of the machine.
  double anchor_cpu = INFINITY, gdal_anchor_cpu = INFINITY;
  double cli_cpu = INFINITY, cli_wall = INFINITY, cli_peak_mb = 0.0;
  for (int round = 0; round < 3; ++round) {
    const auto start = Clock::now();
    pid_t child = 0;
    if (posix_spawn(&child, argv[0], nullptr, nullptr, argv.data(), environ) != 0) {
      fmt::print(stderr, "cannot start {}\n", argv[0]);
      return 1;
    }
    int status = 0;
    rusage usage{};
    wait4(child, &status, 0, &usage);
    cli_wall = std::min(cli_wall, seconds_since(start));
    cli_cpu = std::min(cli_cpu, cpu_seconds(usage));
    cli_peak_mb = std::max(cli_peak_mb, static_cast<double>(usage.ru_maxrss) / 1024.0);
    if (!WIFEXITED(status) || WEXITSTATUS(status) != 0) {
      fmt::print(stderr, "levelhead adjust failed (status {})\n", status);
      return 1;
    }

    double cpu = own_cpu_seconds();
    const Eigen::VectorXd x = general_purpose_solve(normal);
    anchor_cpu = std::min(anchor_cpu, own_cpu_seconds() - cpu);
    cpu = own_cpu_seconds();
    const Eigen::VectorXd x_gdal = general_purpose_solve(read_with_gdal(folder));
    gdal_anchor_cpu = std::min(gdal_anchor_cpu, own_cpu_seconds() - cpu);
    // The tables carry 5 decimals; that rounding, summed along lines of up
    // to a thousand sections, moves heights by about 1e-4 m.
    if (x.size() != x_gdal.size() || (x - x_gdal).cwiseAbs().maxCoeff() > 1e-3) {
      fmt::print(stderr, "the anchors disagree by {} m\n",
                 x.size() == x_gdal.size() ? (x - x_gdal).cwiseAbs().maxCoeff() : -1.0);
      return 1;
    }
  }
  if (!std::getenv("LEVELHEAD_BENCH_KEEP")) std::filesystem::remove_all(folder);

  fmt::print(
      "{:<9}{:>9}{:>9.2f}{:>9.2f}{:>9.0f} | {:>7.2f}{:>8.2f}{:>8.2f} | {:>7.2f}{:>8.2f}{:>8.2f}\n",
      shape, n_points, cli_cpu, cli_wall, cli_peak_mb, anchor_cpu, cli_cpu / anchor_cpu,
      cli_wall / anchor_cpu, gdal_anchor_cpu, cli_cpu / gdal_anchor_cpu,
      cli_wall / gdal_anchor_cpu);
  return 0;
}

// Reading alone: the two tables of a national-style network through
// read_table (text cells, every column), then as points and sections, in
// MB/s of file; the least of three runs.
int run_read_speed(std::size_t n) {
  const std::filesystem::path folder =
      std::filesystem::temp_directory_path() / fmt::format("levelhead-bench-read-{}", n);
  std::filesystem::create_directories(folder);
  write_csv(make_shape("national", n), folder);
  const double megabytes =
      static_cast<double>(std::filesystem::file_size(folder / "points.csv") +
                          std::filesystem::file_size(folder / "sections.csv")) /
      1e6;
  double table_seconds = INFINITY, network_seconds = INFINITY;
  for (int round = 0; round < 3; ++round) {
    auto start = Clock::now();
    const Table points = read_table(folder / "points.csv");
    const Table sections = read_table(folder / "sections.csv");
    table_seconds = std::min(table_seconds, seconds_since(start));
    start = Clock::now();
    const Network net = make_network(read_points(points), read_sections(sections));
    network_seconds = std::min(network_seconds, seconds_since(start));
  }
  if (!std::getenv("LEVELHEAD_BENCH_KEEP")) std::filesystem::remove_all(folder);
  fmt::print(
      "{:.0f} MB: tables {:.2f} s ({:.0f} MB/s), points and sections with the network {:.2f} s "
      "(all: {:.0f} MB/s)\n",
      megabytes, table_seconds, megabytes / table_seconds, network_seconds,
      megabytes / (table_seconds + network_seconds));
  return 0;
}

// Loop finding (levelhead loops) against the adjustment of the same network,
// in one process.
int run_loop_timing() {
  fmt::print("{:<9}{:>9}{:>9}{:>10}{:>10}{:>10}{:>8}\n", "shape", "points", "loops", "loops s",
             "adjust s", "ratio", "MB");
  for (const auto& [shape, n] : {std::pair{"national", 100000}, std::pair{"national", 1000000},
                                 std::pair{"mesh", 100000}, std::pair{"mesh", 1000000}}) {
    testing::SyntheticNetwork synthetic = make_shape(shape, n);
    const Network net = make_network(std::move(synthetic.points), std::move(synthetic.sections));
    auto start = Clock::now();
    const LoopResult loops = find_loops(net, LoopOptions{});
    const double loop_seconds = seconds_since(start);
    double adjust_seconds = NAN;
    if (std::string(shape) != "mesh" || n <= 100000) {
      start = Clock::now();
      adjust(net, AdjustmentOptions{});
      adjust_seconds = seconds_since(start);
    }
    fmt::print("{:<9}{:>9}{:>9}{:>10.2f}{:>10.2f}{:>10.2f}{:>8.0f}\n", shape, net.points.size(),
               loops.loops.size(), loop_seconds, adjust_seconds, loop_seconds / adjust_seconds,
               peak_rss_mb());
    std::fflush(stdout);
  }
  return 0;
}

// Dense reference: N = A'PA as a dense matrix, Cholesky, full inverse.
int run_dense_ratio(std::size_t n) {
  testing::SyntheticNetwork synthetic = testing::random_network(n, n, 3);
  std::mt19937_64 rng(4);
  testing::set_control(synthetic, {0, 1}, {}, 0.0, rng);
  const Network net = make_network(synthetic.points, synthetic.sections);

  auto start = Clock::now();
  const AdjustmentResult sparse = adjust(net, AdjustmentOptions{});
  const double sparse_seconds = seconds_since(start);

  start = Clock::now();
  const NormalEquations normal = assemble(net);
  const int m = static_cast<int>(normal.rhs.size());
  Eigen::MatrixXd N = Eigen::MatrixXd::Zero(m, m);
  for (const auto& t : normal.lower) {
    N(t.row(), t.col()) += t.value();
    if (t.row() != t.col()) N(t.col(), t.row()) += t.value();
  }
  const Eigen::VectorXd& b = normal.rhs;
  const Eigen::MatrixXd Q = N.llt().solve(Eigen::MatrixXd::Identity(m, m));
  const Eigen::VectorXd x = Q * b;
  const double dense_seconds = seconds_since(start);
  fmt::print(
      "dense reference, {} points, {} sections: sparse {:.4f} s, dense {:.4f} s, "
      "dense/sparse = {:.1f}  (check: {:.2e} m)\n",
      net.points.size(), net.sections.size(), sparse_seconds, dense_seconds,
      dense_seconds / sparse_seconds, std::abs(x[m - 1] - sparse.points.back().height));
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::string self = std::filesystem::canonical("/proc/self/exe").string();
  if (argc == 4 && std::string(argv[1]) == "--case") {
    return run_case(argv[2], std::stoul(argv[3]));
  }
  if (argc == 3 && std::string(argv[1]) == "--dense") return run_dense_ratio(std::stoul(argv[2]));
  if (argc == 2 && std::string(argv[1]) == "--solvers") return run_solver_comparison();
  if (argc == 2 && std::string(argv[1]) == "--loops") return run_loop_timing();
  if (argc == 3 && std::string(argv[1]) == "--read") return run_read_speed(std::stoul(argv[2]));
  if (argc == 4 && std::string(argv[1]) == "--cli") {
    fmt::print("{:<9}{:>9}{:>9}{:>9}{:>9} | {:>23} | {:>23}\n", "", "", "CLI", "", "",
               "solve in memory", "GDAL read + solve");
    fmt::print("{:<9}{:>9}{:>9}{:>9}{:>9} | {:>7}{:>8}{:>8} | {:>7}{:>8}{:>8}\n", "shape", "points",
               "cpu s", "wall s", "peak MB", "cpu s", "cpu/", "wall/", "cpu s", "cpu/", "wall/");
    return run_cli_against_anchor(argv[2], std::stoul(argv[3]));
  }
  const bool quick = argc == 2 && std::string(argv[1]) == "--quick";
  // Each case runs with the allocator settings the CLI uses on large inputs.
  ::setenv("GLIBC_TUNABLES", cli::large_input_malloc_tunables, 1);

  fmt::print("levelhead adjust benchmark (seconds; every height's sigma computed)\n");
  fmt::print("{:<9}{:>9}{:>9}{:>8}{:>8}{:>8}{:>8}{:>8}{:>8}{:>8}{:>9}{:>9}{:>5}{:>9}\n", "shape",
             "points", "sections", "read", "assem", "order", "factor", "solve", "sigmas", "total",
             "nnz(L)", "flops", "L", "peak MB");
  std::vector<std::size_t> sizes = {10000, 100000};
  if (!quick) sizes.push_back(1000000);
  int status = 0;
  for (const char* shape : {"national", "mesh"}) {
    for (std::size_t n : sizes) {
      std::fflush(stdout);
      status |= std::system(fmt::format("'{}' --case {} {}", self, shape, n).c_str());
    }
  }
  std::fflush(stdout);
  for (std::size_t n : {1000, 2000}) {
    status |= std::system(fmt::format("'{}' --dense {}", self, n).c_str());
  }
  return status == 0 ? 0 : 1;
}
