#pragma once
// The output folder of a whole run of the chain, written all together or not
// at all.
//
// In:  the folder the user gave (--out), the project it is for, and every
//      input file of the run.
// Out: while the RunFolder lives, `folder()` is a fresh, empty folder at that
//      path for the stages to write into. A previous complete run there is
//      moved aside first (to `.NAME.previous` beside it); `commit()` marks the
//      new run complete and deletes the previous one; destroying the RunFolder
//      without a commit deletes the new folder and puts the previous run back.
//      A run killed midway is found by the next run into the same folder,
//      which restores the previous complete run before it starts.
//      A lock file beside the folder (`.NAME.lock`, holding the process id)
//      keeps a second run out while one is writing.
// Errors: OutputError, before anything is moved, when
//      - another run holds the lock (named by its process id);
//      - an input of the run lies inside the folder (the run replaces the
//        whole folder, so it would lose the input);
//      - the folder holds the run of another project and `replace_other` is
//        not set;
//      - the folder is not empty and is not a levelhead run (its first few
//        files are named): a user's folder is never replaced.
//      A path that is a file, or a folder that cannot be created, is an
//      OutputError too.

#include <filesystem>
#include <string>
#include <vector>

namespace levelhead {

struct RunFolderOptions {
  // Identifies whose run the folder holds: the project file, or a fixed tag
  // such as "demo".
  std::string project;
  std::vector<std::filesystem::path> inputs;
  bool replace_other = false;  // replace the run of another project
};

class RunFolder {
 public:
  RunFolder(std::filesystem::path folder, RunFolderOptions options);
  ~RunFolder();
  RunFolder(const RunFolder&) = delete;
  RunFolder& operator=(const RunFolder&) = delete;

  const std::filesystem::path& folder() const { return folder_; }
  // Whether a previous run was moved aside (and comes back without a commit).
  bool had_previous() const { return had_previous_; }
  // Marks the run complete and removes the previous one.
  void commit();

 private:
  void recover_interrupted_run();
  void check_replaceable() const;
  std::filesystem::path folder_, previous_, lock_;
  RunFolderOptions options_;
  int lock_fd_ = -1;
  bool had_previous_ = false;
  bool committed_ = false;
};

// The name of the marker file a run keeps in its folder (hidden).
inline constexpr const char* run_marker_name = ".levelhead-run";

}  // namespace levelhead
