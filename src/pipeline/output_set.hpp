#pragma once
// Outputs that must change together (predict's rasters and report, a region's mosaics) committed
// as one set: a kill at any instant leaves the folder with the complete old set or the complete
// new set, never a mix (docs/limits.md, "Outputs change as a set").
//
// Every new file is first complete under a temporary name in the destination folder. The commit
//   1. writes a commit record (".habcast-commit-NAME") listing every rename and removal, under a
//      temporary name, flushed to disk, then
//   2. renames the record into place: the commit point. Before it, the old set is untouched;
//      after it, the new set is complete (partly under temporary names) and described on disk;
//   3. renames each temporary file onto its final name, removes the old files the new set has
//      no place for (e.g. novelty.tif when the checks that make it were turned off), and
//   4. removes the record.
// A run killed during 3 leaves the record; the next run into the folder (holding its lock) reads
// it and finishes the renames and removals before anything else (recover_output_sets); a run
// killed before 2 leaves only temporary files, which the next run deletes.
#include <exception>
#include <string>
#include <vector>

namespace habcast {

class OutputSet {
 public:
  /// `folder` holds every file of the set, directly or in sub-folders; `name` names the set's
  /// commit record (kept in `folder`); `owned` are the final names relative to `folder`
  /// ("report.json", "ssp1/change.tif") the set may hold: those the new set does not provide are
  /// removed at the commit.
  OutputSet(std::string folder, std::string name, std::vector<std::string> owned);
  /// Before the commit point, deletes the temporary files; after it, leaves them to recovery.
  ~OutputSet();
  OutputSet(const OutputSet&) = delete;
  OutputSet& operator=(const OutputSet&) = delete;

  /// `temporary` (complete, beside its final name) is to become `final_name` (relative to the
  /// folder).
  /// The set owns the temporary file from now on.
  void add(const std::string& temporary, const std::string& final_name);

  /// Commits as described above. Throws IoError when a step fails; after the commit point the
  /// record stays, and the next run completes the set.
  void commit();

 private:
  std::string folder_, name_;
  std::vector<std::string> owned_;
  std::vector<std::pair<std::string, std::string>> renames_;  ///< temporary name -> final name
  bool committed_ = false;  ///< the commit record is in place
};

/// Completes every set whose commit was interrupted in `folder` (reads each commit record,
/// finishes its renames and removals, removes it) and deletes temporary commit records. Call it
/// while holding the folder's lock, before reading or writing the set. Returns how many sets
/// were completed.
int recover_output_sets(const std::string& folder);

/// Test-only fault injection: the commit (and recovery) call fault_point() before each
/// filesystem operation; with `step` >= 0 the step-th call (0-based) throws SimulatedCrash and
/// from then on every clean-up is skipped, as after a SIGKILL. -1 turns it off. Returns nothing;
/// commit_steps_taken() tells how many points were passed since the last arming.
void arm_commit_fault_for_testing(int step);
int commit_steps_taken();
bool crash_simulated();

/// Thrown by an armed fault point; not an habcast Error, so nothing handles it as one.
struct SimulatedCrash : std::exception {
  [[nodiscard]] const char* what() const noexcept override { return "simulated crash (test fault injection)"; }
};

}  // namespace habcast
