// Fuzz harness: transducer records and manual water-level readings, reduced
// against the demo's wells and sensors (levelhead/heads/transducer.hpp).
// Input: the records table, then a line "#levels", then the levels table.
// Checks: the stage either writes its files (whose numbers the output
// check finds finite) or throws a typed error.

#include <unistd.h>

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <string>

#include "fuzz_support.hpp"
#include "levelhead/core/table.hpp"
#include "levelhead/heads/transducer.hpp"
#include "levelhead/heads/wells.hpp"

using namespace levelhead;
namespace fs = std::filesystem;

namespace {

struct Site {
  WellSet wells = read_wells(read_table(LEVELHEAD_FIXTURES_DIR "/demo/wells.csv"));
  Table sensors = read_table(LEVELHEAD_FIXTURES_DIR "/demo/sensors.csv");
  fs::path folder;

  Site() {
    // Memory-backed where the system has it: every run writes its outputs.
    const fs::path base = fs::exists("/dev/shm") ? fs::path("/dev/shm") : fs::temp_directory_path();
    folder = base / ("levelhead-fuzz-transducer-" + std::to_string(::getpid()));
    fs::create_directories(folder / "out");
  }
  ~Site() {
    std::error_code ignored;
    fs::remove_all(folder, ignored);
  }
};

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  static const Site site;
  const std::string_view input = fuzz::as_text(data, size);
  constexpr std::string_view marker = "\n#levels\n";
  const std::size_t split = input.find(marker);
  const std::string_view records = split == std::string_view::npos ? input : input.substr(0, split);
  const std::string_view levels = split == std::string_view::npos
                                      ? std::string_view("well,time,depth\n")
                                      : input.substr(split + marker.size());
  const fs::path records_file = site.folder / "records.csv";
  {
    std::ofstream out(records_file, std::ios::binary | std::ios::trunc);
    out.write(records.data(), static_cast<std::streamsize>(records.size()));
  }
  fuzz::accept_typed_errors([&] {
    TimeReader times;
    reduce_transducers(site.wells, site.sensors, records_file, TableOptions{},
                       parse_delimited_text(levels, "levels.csv"), TransducerOptions{}, times,
                       site.folder / "out");
  });
  return 0;
}
