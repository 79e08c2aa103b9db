// checkpoint: append-only records of a sweep's progress, so a killed sweep resumes where it was.
#pragma once

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/sim.hpp"

// A checkpoint is a text file of one-line records, each "<crc32> <json>\n" where the CRC-32
// (IEEE 802.3 polynomial) covers the JSON text:
//   line 1, the header: format name and version, the program version, the sweep's settings
//     (detail::sweep_settings_json, the same object the JSON output records) and their
//     fingerprint (FNV-1a 64 of the settings text);
//   then one record per batch per point: point index, frames done, the six counts, the EVM sums
//     as hexadecimal floating point (exact), done flag and stop reason.
// The header is written through a temporary file and renamed, so a checkpoint never exists
// without one. Batch records are appended with one write() each, so a record that returned
// survives any kill of the process; they are fdatasync'ed when a point finishes and otherwise at
// most every sync_interval seconds (default 1 s: a sync costs 3 to 8 ms here, as much as a whole
// batch of a fast link), so a crash of the machine loses at most that much work. Interval 0
// syncs every record. A process killed mid-write leaves at most a torn last line
// (no newline, or a checksum that does not match): reading ignores it and the writer cuts it
// off before appending. Damage anywhere else is an InputError. Counts of a resumed sweep are
// bit-identical to an uninterrupted run because frames are keyed by (seed, point, frame) and
// the batch schedule continues from the frames done (see run_sweep).
namespace qamsight {

/// What a checkpoint file holds, parsed and checked for consistency but not yet compared with
/// a sweep.
struct CheckpointContents {
  std::string program_version;          ///< of the qamsight that wrote it
  std::string settings;                 ///< canonical settings JSON (sweep_settings_json)
  std::uint64_t fingerprint = 0;        ///< FNV-1a 64 of `settings`
  std::size_t points = 0;               ///< points of the sweep
  std::vector<PointState> states;       ///< latest state of each point (fresh where none)
  std::vector<bool> recorded;           ///< whether a record exists for each point
  std::size_t records = 0;              ///< batch records read
  std::size_t valid_bytes = 0;          ///< length of the file up to the last whole record
  bool torn_tail = false;               ///< a torn last record was ignored
};

/// Parses checkpoint text. Throws InputError("checkpoint '<source>' line <n>: <problem>") for
/// anything but a torn last record (which is dropped and reported in `torn_tail`).
CheckpointContents parse_checkpoint(std::string_view text, const std::string& source);

/// The canonical settings text and fingerprint of a sweep (what a checkpoint header records).
std::string checkpoint_settings(const SweepConfig& config);
std::uint64_t checkpoint_fingerprint(std::string_view settings) noexcept;

/// Throws InputError naming `source` and the first setting that differs ("stop_rule.min_errors
/// is 100 in the checkpoint, 50 now") unless `contents` was written for `config` by a program
/// of the same version.
void require_same_sweep(const CheckpointContents& contents, const SweepConfig& config,
                        const std::string& source);

/// The checkpoint of one running sweep. Owns the open file (locked against a second writer).
/// Attach it to the sweep's hooks; it must outlive run_sweep. Not thread-safe (run_sweep calls
/// on_batch from its own thread only).
class SweepCheckpoint {
 public:
  /// Starts a new checkpoint at `path` (header written atomically). InputError if the file
  /// exists (continue it with resume() or remove it) or cannot be written.
  static SweepCheckpoint start(const std::string& path, const SweepConfig& config);
  /// Continues the checkpoint at `path`: reads it, requires it to belong to `config`, cuts off a
  /// torn last record and opens it for appending. InputError for a missing, unreadable, damaged
  /// or mismatching file.
  static SweepCheckpoint resume(const std::string& path, const SweepConfig& config);

  SweepCheckpoint(SweepCheckpoint&& other) noexcept;
  SweepCheckpoint& operator=(SweepCheckpoint&& other) noexcept;
  SweepCheckpoint(const SweepCheckpoint&) = delete;
  SweepCheckpoint& operator=(const SweepCheckpoint&) = delete;
  ~SweepCheckpoint();

  /// One state per point: what the file held at resume() (fresh states after start()).
  const std::vector<PointState>& states() const noexcept { return states_; }
  /// Points that were finished in the file when it was opened.
  std::size_t points_done() const noexcept;
  /// Whether resume() found and dropped a torn last record.
  bool dropped_torn_record() const noexcept { return torn_; }
  const std::string& path() const noexcept { return path_; }

  /// Appends the record of `point` after a batch (synced as described above). InputError if the
  /// write or the sync fails.
  void record(std::size_t point, const PointState& state);
  /// Seconds between syncs of unfinished points' records; 0 = sync every record. ConfigError
  /// unless 0 to 3600.
  void set_sync_interval(double seconds);
  /// Sets hooks.resume to states() and hooks.on_batch to record().
  void attach(SweepHooks& hooks);

 private:
  SweepCheckpoint(std::string path, int fd, std::vector<PointState> states, bool torn);
  std::string path_;
  int fd_ = -1;
  std::vector<PointState> states_;
  bool torn_ = false;
  double sync_interval_s_ = 1.0;
  double last_sync_s_ = 0.0;  // steady-clock seconds of the last sync
};

}  // namespace qamsight
