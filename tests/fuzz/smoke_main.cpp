// Driver for the fuzz harnesses in an ordinary build (no libFuzzer): runs
// each seed file, then a fixed number of mutations of it, and prints the
// executions per second. A crash, an escaping exception or a failed check
// ends the process with a non-zero status, so CTest reports it; the input
// that did it is written to smoke-failure.bin in the working folder.
//
// Usage: fuzz_NAME [--mutations N] [--seed S] FILE_OR_FOLDER...
//
// The mutations are the usual byte-level ones of mutation fuzzers (flip,
// insert, erase, duplicate a span, splice a token that matters to the
// readers), drawn from a fixed-seed generator so that a failure repeats.
// This is a smoke run for CI; the coverage-guided run is the libFuzzer build
// (scripts/fuzz.sh).

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <csignal>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <random>
#include <string>
#include <string_view>
#include <vector>

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size);

namespace {

namespace fs = std::filesystem;

std::string read_bytes(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

// Tokens the readers treat specially: separators, quotes, line ends, signs,
// zones, non-finite and huge numbers, bytes that are not UTF-8.
constexpr std::string_view tokens[] = {",",
                                       ";",
                                       "\t",
                                       "\"",
                                       "\n",
                                       "\r\n",
                                       "#",
                                       "=",
                                       "[",
                                       "]",
                                       "-",
                                       "+",
                                       "+-",
                                       ".",
                                       "e308",
                                       "1e400",
                                       "nan",
                                       "inf",
                                       "-0",
                                       "T",
                                       "Z",
                                       ":",
                                       "-06:00",
                                       "24:00",
                                       "2024-02-30",
                                       "9999-12-31T23:59:59",
                                       "\xff",
                                       "\xc3",
                                       "\xef\xbb\xbf",
                                       std::string_view("\0", 1),
                                       "0000000000000000000000",
                                       "\"\"",
                                       "[references.x]"};

std::string mutate(std::string text, std::mt19937_64& random) {
  const auto pick = [&](std::size_t n) {
    return n == 0 ? std::size_t{0} : static_cast<std::size_t>(random() % n);
  };
  const int rounds = 1 + static_cast<int>(pick(4));
  for (int round = 0; round < rounds; ++round) {
    const std::size_t at = pick(text.size() + 1);
    switch (pick(5)) {
      case 0:
        if (!text.empty()) text[pick(text.size())] ^= static_cast<char>(1u << pick(8));
        break;
      case 1:
        text.insert(at, 1, static_cast<char>(pick(256)));
        break;
      case 2:
        text.erase(at, pick(16) + 1);
        break;
      case 3: {
        const std::size_t from = pick(text.size() + 1);
        text.insert(at, text.substr(from, pick(64) + 1));
        break;
      }
      default: {
        const std::string_view token = tokens[pick(std::size(tokens))];
        text.insert(at, token.data(), token.size());
      }
    }
  }
  return text;
}

// The input being run, for the signal handler to keep.
const std::string* current_input = nullptr;

// Async-signal-safe: open, write, close, then the default action.
extern "C" void keep_failing_input(int signal_number) {
  if (current_input) {
    const int fd = ::open("smoke-failure.bin", O_WRONLY | O_CREAT | O_TRUNC, 0644);
    if (fd >= 0) {
      const ssize_t written = ::write(fd, current_input->data(), current_input->size());
      static_cast<void>(written);
      ::close(fd);
    }
  }
  std::signal(signal_number, SIG_DFL);
  std::raise(signal_number);
}

void run_one(const std::string& input) {
  current_input = &input;
  LLVMFuzzerTestOneInput(reinterpret_cast<const std::uint8_t*>(input.data()), input.size());
  current_input = nullptr;
}

}  // namespace

int main(int argc, char** argv) {
  long mutations = 0;
  std::uint64_t seed = 1;
  std::vector<fs::path> seeds;
  for (int i = 1; i < argc; ++i) {
    const std::string_view arg = argv[i];
    if (arg == "--mutations" && i + 1 < argc) {
      mutations = std::strtol(argv[++i], nullptr, 10);
    } else if (arg == "--seed" && i + 1 < argc) {
      seed = std::strtoull(argv[++i], nullptr, 10);
    } else if (fs::is_directory(arg)) {
      for (const auto& entry : fs::directory_iterator(arg))
        if (entry.is_regular_file()) seeds.push_back(entry.path());
    } else {
      seeds.emplace_back(arg);
    }
  }
  std::sort(seeds.begin(), seeds.end());
  if (seeds.empty()) {
    std::fprintf(stderr, "usage: %s [--mutations N] [--seed S] FILE_OR_FOLDER...\n", argv[0]);
    return 2;
  }
  for (const int signal_number : {SIGABRT, SIGSEGV, SIGFPE, SIGBUS, SIGILL})
    std::signal(signal_number, keep_failing_input);
  std::mt19937_64 random(seed);
  const auto start = std::chrono::steady_clock::now();
  long executions = 0;
  for (const fs::path& file : seeds) {
    const std::string original = read_bytes(file);
    run_one(original);
    ++executions;
    for (long m = 0; m < mutations; ++m, ++executions) run_one(mutate(original, random));
  }
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("%ld executions over %zu seeds in %.2f s (%.0f exec/s)\n", executions, seeds.size(),
              seconds, seconds > 0 ? static_cast<double>(executions) / seconds : 0.0);
  return 0;
}
