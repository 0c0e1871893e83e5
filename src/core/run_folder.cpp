#include "levelhead/core/run_folder.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <fstream>
#include <nlohmann/json.hpp>
#include <optional>

#include "levelhead/core/errors.hpp"

namespace levelhead {

namespace fs = std::filesystem;

namespace {

struct RunMarker {
  std::string project;
  bool complete = false;
};

std::optional<RunMarker> read_marker(const fs::path& folder) {
  std::ifstream in(folder / run_marker_name);
  if (!in) return std::nullopt;
  try {
    const nlohmann::json j = nlohmann::json::parse(in);
    return RunMarker{j.at("project").get<std::string>(), j.at("state") == "complete"};
  } catch (const nlohmann::json::exception&) {
    return RunMarker{"", false};  // damaged: a run of ours, of unknown project, not finished
  }
}

void sync_path(const fs::path& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return;
  ::fsync(fd);
  ::close(fd);
}

// Written under a temporary name and renamed, so the marker is never half a file.
void write_marker(const fs::path& folder, const std::string& project, bool complete) {
  const fs::path temporary = folder / (std::string(run_marker_name) + ".partial");
  {
    std::ofstream out(temporary, std::ios::trunc);
    out << nlohmann::json{{"project", project}, {"state", complete ? "complete" : "running"}}.dump(
               -1, ' ', false, nlohmann::json::error_handler_t::replace)
        << '\n';
    if (!out.flush()) {
      throw OutputError(fmt::format("cannot write in the output folder '{}'", folder.string()));
    }
  }
  sync_path(temporary);
  std::error_code ec;
  fs::rename(temporary, folder / run_marker_name, ec);
  if (ec) {
    throw OutputError(
        fmt::format("cannot write in the output folder '{}': {}", folder.string(), ec.message()));
  }
  sync_path(folder);
}

bool is_inside(const fs::path& path, const fs::path& folder) {
  std::error_code ec;
  const fs::path p = fs::weakly_canonical(fs::absolute(path), ec);
  const fs::path f = fs::weakly_canonical(fs::absolute(folder), ec);
  auto pi = p.begin();
  for (auto fi = f.begin(); fi != f.end(); ++fi, ++pi) {
    if (fi->empty()) continue;  // a trailing separator
    if (pi == p.end() || *pi != *fi) return false;
  }
  return true;
}

}  // namespace

RunFolder::RunFolder(fs::path folder, RunFolderOptions options)
    : folder_(std::move(folder)), options_(std::move(options)) {
  if (folder_.filename().empty()) folder_ = folder_.parent_path();  // "out/" -> "out"
  const fs::path parent = folder_.has_parent_path() ? folder_.parent_path() : fs::path(".");
  const std::string name = folder_.filename().string();
  if (name.empty() || name == "." || name == "..") {
    throw OutputError(fmt::format(
        "'{}' cannot be a run's output folder: the run replaces the whole folder; name a folder "
        "of its own, e.g. '{}'",
        folder_.string(), (folder_ / "results").string()));
  }
  std::error_code ec;
  fs::create_directories(parent, ec);
  if (ec) {
    throw OutputError(
        fmt::format("cannot create the folder '{}': {}", parent.string(), ec.message()));
  }
  previous_ = parent / ("." + name + ".previous");
  lock_ = parent / ("." + name + ".lock");

  // The lock: flock() is released by the kernel when a process dies, so a
  // killed run never leaves a stale lock; the file holds the process id for
  // the message. After locking, the file must still be the one at the path
  // (another run may have removed it between open and lock).
  for (;;) {
    lock_fd_ = ::open(lock_.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
    if (lock_fd_ < 0) {
      throw OutputError(
          fmt::format("cannot create the lock file '{}' beside the output folder", lock_.string()));
    }
    if (::flock(lock_fd_, LOCK_EX | LOCK_NB) != 0) {
      char text[32] = {};
      const ssize_t n = ::pread(lock_fd_, text, sizeof text - 1, 0);
      ::close(lock_fd_);
      lock_fd_ = -1;
      throw OutputError(fmt::format(
          "another levelhead run{} is writing to '{}'; wait for it to finish or choose another "
          "output folder",
          n > 0 ? fmt::format(" (process {})", std::string(text, static_cast<std::size_t>(n)))
                : std::string(),
          folder_.string()));
    }
    struct stat held {
    }, at_path{};
    if (::fstat(lock_fd_, &held) == 0 && ::stat(lock_.c_str(), &at_path) == 0 &&
        held.st_ino == at_path.st_ino && held.st_dev == at_path.st_dev) {
      break;
    }
    ::close(lock_fd_);
  }
  const std::string pid = std::to_string(static_cast<long>(::getpid()));
  if (::ftruncate(lock_fd_, 0) != 0 || ::pwrite(lock_fd_, pid.data(), pid.size(), 0) < 0) {
    // The lock holds without the id; only the message of a second run is poorer.
  }

  try {
    recover_interrupted_run();
    check_replaceable();
    if (fs::exists(folder_)) {
      fs::rename(folder_, previous_);
      had_previous_ = true;
    }
    fs::create_directory(folder_);
    write_marker(folder_, options_.project, false);
  } catch (const fs::filesystem_error& e) {
    if (had_previous_ && !fs::exists(folder_)) fs::rename(previous_, folder_, ec);
    ::unlink(lock_.c_str());
    ::close(lock_fd_);
    throw OutputError(fmt::format("cannot prepare the output folder '{}': {}", folder_.string(),
                                  e.code().message()));
  } catch (...) {
    ::unlink(lock_.c_str());
    ::close(lock_fd_);
    throw;
  }
}

// A run killed before its commit left either its partial folder beside the
// previous run, or (killed while moving) only the previous run: put the
// previous run back. Killed after marking itself complete: it is the newest
// complete run, and only the previous one is left to delete.
void RunFolder::recover_interrupted_run() {
  if (!fs::exists(previous_)) return;
  const auto marker = read_marker(folder_);
  if (marker && marker->complete) {
    fs::remove_all(previous_);
    return;
  }
  if (fs::exists(folder_)) fs::remove_all(folder_);
  fs::rename(previous_, folder_);
}

void RunFolder::check_replaceable() const {
  if (!fs::exists(folder_)) return;
  if (!fs::is_directory(folder_)) {
    throw OutputError(
        fmt::format("'{}' is a file, not a folder; give the run an output folder of its own",
                    folder_.string()));
  }
  for (const fs::path& input : options_.inputs) {
    if (is_inside(input, folder_)) {
      throw OutputError(fmt::format(
          "the output folder '{}' holds the input '{}'; a run replaces its whole output folder, "
          "so keep the inputs elsewhere (e.g. copy them to a folder of their own) or choose "
          "another --out",
          folder_.string(), input.string()));
    }
  }
  if (fs::is_empty(folder_)) return;
  if (const auto marker = read_marker(folder_)) {
    if (marker->project == options_.project || options_.replace_other) return;
    throw OutputError(fmt::format(
        "the output folder '{}' holds the run of another project ({}); give --replace to "
        "replace it, or choose another --out",
        folder_.string(), marker->project.empty() ? "not named" : marker->project));
  }
  if (fs::exists(folder_ / "run.json")) {
    if (options_.replace_other) return;
    throw OutputError(fmt::format(
        "the output folder '{}' holds a levelhead run that does not say which project it is for; "
        "give --replace to replace it, or choose another --out",
        folder_.string()));
  }
  // The first few names in sorted order, so the message is the same each time.
  std::vector<std::string> names;
  for (const auto& entry : fs::directory_iterator(folder_))
    names.push_back(entry.path().filename().string());
  std::sort(names.begin(), names.end());
  if (names.size() > 4) {
    names.resize(4);
    names.push_back("...");
  }
  throw OutputError(fmt::format(
      "the output folder '{}' is not empty and is not the output of a levelhead run (it holds {}); "
      "a run replaces its whole output folder, so choose a new or empty folder",
      folder_.string(), fmt::join(names, ", ")));
}

void RunFolder::commit() {
  write_marker(folder_, options_.project, true);
  committed_ = true;
  std::error_code ignored;
  if (had_previous_) fs::remove_all(previous_, ignored);
}

RunFolder::~RunFolder() {
  std::error_code ignored;
  if (!committed_) {
    fs::remove_all(folder_, ignored);
    if (had_previous_) fs::rename(previous_, folder_, ignored);
  }
  ::unlink(lock_.c_str());
  ::close(lock_fd_);
}

}  // namespace levelhead
