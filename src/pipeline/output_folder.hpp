#pragma once
// What a run does with its output folder around the work itself: the folder (and the sub-folders
// its outputs go to) created and locked, leftovers of killed runs completed or removed, existing
// outputs refused unless the user asked to replace them, and the finished outputs committed as one
// set (pipeline/output_set.hpp). `predict` writes one folder; a run of scenarios or of a model set
// writes a folder with a sub-folder per prediction, and commits all of them as one set.
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "pipeline/folder_lock.hpp"

namespace habcast {

class OutputRaster;

/// The output folder, held for the run. `owned` are the names, relative to `folder`
/// ("report.json", "ssp1/change.tif"), that the run may write: their folders are created and
/// locked (the top folder first), interrupted sets completed, leftover temporaries of those names
/// removed, and existing ones refused unless `overwrite` (`other_way` ends that message).
class OutputFolder {
 public:
  OutputFolder(const std::string& folder, const std::vector<std::string>& owned, bool overwrite,
               const std::string& other_way);
  OutputFolder(const OutputFolder&) = delete;
  OutputFolder& operator=(const OutputFolder&) = delete;

 private:
  std::vector<std::unique_ptr<FolderLock>> locks_;
};

/// The finished outputs of a run, committed as one set: rasters (with their sidecars), pictures,
/// tables and reports, in `folder` or its sub-folders, plus one picture `outside_path` the user
/// may have placed anywhere (committed right after the set; empty for none). Destroyed before
/// commit(), it deletes every temporary file it holds.
class OutputCommit {
 public:
  /// `name` names the commit record; `owned` as for OutputFolder: owned names the new set does not
  /// provide are removed at the commit.
  OutputCommit(const std::string& folder, const std::string& name, std::vector<std::string> owned,
               const std::string& outside_path = "");
  ~OutputCommit();
  OutputCommit(const OutputCommit&) = delete;
  OutputCommit& operator=(const OutputCommit&) = delete;

  /// Closes each raster and takes its temporary file (and sidecar) into the set.
  void take_rasters(const std::vector<OutputRaster*>& rasters);
  /// Where the finished raster `final_path` is now (its temporary name), for drawing from it.
  [[nodiscard]] std::string finished(const std::string& final_path) const;
  /// Draws the picture at `outside_path` with `draw(path)` into a temporary file and adds it to
  /// the set (or, outside the folder, commits it right after the set). Returns why it could not be
  /// drawn, or an empty string.
  std::string add_outside_picture(const std::function<void(const std::string& path)>& draw);
  /// Has `write(temporary)` write the file that becomes `final_path` and adds it to the set.
  void add_written(const std::string& final_path, const std::function<void(const std::string& temporary)>& write);
  /// Writes `bytes` under a temporary name and adds the file that becomes `final_path` to the set.
  void add_file(const std::string& final_path, const std::string& bytes);
  /// Commits the set (pipeline/output_set.hpp), then the outside picture.
  void commit();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

/// `path` relative to `folder` ("ssp1/change.tif"), both resolved to real paths. Throws
/// std::logic_error when `path` does not lie in `folder`.
std::string name_in_folder(const std::string& folder, const std::string& path);

}  // namespace habcast
