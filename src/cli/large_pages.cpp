#include "cli/large_pages.hpp"

#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <string>
#include <string_view>
#include <system_error>
#include <utility>

namespace levelhead::cli {

namespace {

constexpr const char* tunables = "GLIBC_TUNABLES";
// Holds the caller's GLIBC_TUNABLES across the restart ("-" when unset).
constexpr const char* saved_tunables = "LEVELHEAD_TUNABLES_BEFORE_RESTART";
// The variables of `waiting_threads` the restart set (the caller had not),
// comma-separated, to unset in the restarted run.
constexpr const char* set_by_restart = "LEVELHEAD_SET_BY_RESTART";

// Idle threads of the libraries sleep rather than spin: OpenBLAS's after
// 2^4 cycles instead of about 2^28 (read when the library loads), and
// OpenMP's (CHOLMOD) at once. Spinning took a fifth of the CPU of a 1e6-point
// mesh adjustment on 2 cores (14.5 against 11.7 CPU s, wall time the same).
constexpr std::pair<const char*, const char*> waiting_threads[] = {{"OPENBLAS_THREAD_TIMEOUT", "4"},
                                                                   {"OMP_WAIT_POLICY", "passive"}};

// Below this much input the restart (one more start of the program and its
// libraries, about 80 ms) costs about what huge pages save: measured with
// `adjust` on 5 MB of tables, 0.74 s became 0.50 s.
constexpr std::uintmax_t large_input_bytes = 4u << 20;

std::uintmax_t file_size_or_zero(const std::filesystem::path& path) {
  std::error_code error;
  if (!std::filesystem::is_regular_file(path, error)) return 0;
  const std::uintmax_t size = std::filesystem::file_size(path, error);
  return error ? 0 : size;
}

// The arguments that name files, and for a project file the files beside
// it (where a project keeps its tables).
std::uintmax_t input_bytes(int argc, char** argv) {
  std::uintmax_t total = 0;
  for (int i = 1; i < argc; ++i) {
    const std::filesystem::path path(argv[i]);
    total += file_size_or_zero(path);
    std::error_code error;
    if (path.extension() == ".toml" && std::filesystem::is_regular_file(path, error)) {
      const std::filesystem::path folder =
          path.has_parent_path() ? path.parent_path() : std::filesystem::path(".");
      for (const auto& entry : std::filesystem::directory_iterator(folder, error))
        total += file_size_or_zero(entry.path());
    }
  }
  return total;
}

}  // namespace

// Huge pages matter for levelhead's large runs because it builds big arrays
// (tables, normal matrix, factor, selected inverse) and each 4 kB page of
// them costs a page fault on first touch, and its clearing. Measured on a
// 2-core virtual machine, `adjust` of a 1e6-point national network: 8.2 s
// wall and 366 000 page faults became 5.0 s and 9 300 with huge pages, and
// 3.8 s and 6 300 with freed memory kept; taking every block from the heap
// then gave 2.22 s against 2.36 s (least of four runs each) and 3 000 faults.
// glibc reads tunables only at start-up, hence the restart.
void restart_with_large_pages_for_large_inputs(int argc, char** argv) {
#if defined(__linux__) && defined(__GLIBC__)
  if (const char* before = std::getenv(saved_tunables)) {  // the restarted run
    const std::string original = before;
    if (original == "-")
      ::unsetenv(tunables);
    else
      ::setenv(tunables, original.c_str(), 1);
    ::unsetenv(saved_tunables);
    if (const char* set = std::getenv(set_by_restart)) {
      const std::string names = set;
      for (const auto& [name, value] : waiting_threads) {
        if (names.find(name) != std::string::npos) ::unsetenv(name);
      }
      ::unsetenv(set_by_restart);
    }
    return;
  }
  if (const char* choice = std::getenv("LEVELHEAD_LARGE_PAGES");
      choice && std::string_view(choice) == "0")
    return;
  const char* current = std::getenv(tunables);
  if (current && std::string_view(current).find("glibc.malloc.hugetlb") != std::string_view::npos)
    return;  // the caller chose
  if (input_bytes(argc, argv) < large_input_bytes) return;

  const std::string original = current ? current : "-";
  const std::string with_huge_pages = current && *current
                                          ? std::string(current) + ":" + large_input_malloc_tunables
                                          : std::string(large_input_malloc_tunables);
  std::string set_here;
  for (const auto& [name, value] : waiting_threads) {
    if (std::getenv(name)) continue;  // the caller chose
    ::setenv(name, value, 1);
    set_here += std::string(set_here.empty() ? "" : ",") + name;
  }
  ::setenv(set_by_restart, set_here.c_str(), 1);
  ::setenv(saved_tunables, original.c_str(), 1);
  ::setenv(tunables, with_huge_pages.c_str(), 1);
  ::execv("/proc/self/exe", argv);
  // Not restarted: go on as we are, with the environment as it was.
  if (current)
    ::setenv(tunables, current, 1);
  else
    ::unsetenv(tunables);
  ::unsetenv(saved_tunables);
  for (const auto& [name, value] : waiting_threads) {
    if (set_here.find(name) != std::string::npos) ::unsetenv(name);
  }
  ::unsetenv(set_by_restart);
#else
  (void)argc;
  (void)argv;
#endif
}

}  // namespace levelhead::cli
