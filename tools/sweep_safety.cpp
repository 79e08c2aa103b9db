// `qamsight sweep`'s nothing-lost helpers: checkpoint set-up and the note after a signal.
#include "sweep_safety.hpp"

#include <sys/stat.h>

#include <csignal>
#include <cstdio>

#include "cli.hpp"

namespace qamsight::cli {


std::unique_ptr<SweepCheckpoint> attach_checkpoint(const std::string& path, bool resume,
                                                   const SweepConfig& config, SweepHooks& hooks) {
  if (path.empty()) {
    if (resume) throw UsageError("--resume needs --checkpoint PATH (the checkpoint to continue)");
    return nullptr;
  }
  struct stat st {};
  const bool exists = ::stat(path.c_str(), &st) == 0;
  std::unique_ptr<SweepCheckpoint> ck;
  if (resume && exists) {
    ck = std::make_unique<SweepCheckpoint>(SweepCheckpoint::resume(path, config));
    std::fprintf(stderr, "qamsight: resuming from checkpoint %s: %zu of %zu points finished%s\n", path.c_str(),
                 ck->points_done(), ck->states().size(),
                 ck->dropped_torn_record() ? " (a torn last record was dropped)" : "");
  } else {
    if (resume) std::fprintf(stderr, "qamsight: no checkpoint at %s yet; starting a new one\n", path.c_str());
    ck = std::make_unique<SweepCheckpoint>(SweepCheckpoint::start(path, config));
  }
  ck->attach(hooks);  // the hooks point at *ck, which stays where it is
  return ck;
}

std::string interrupted_note(const SweepResult& result, std::size_t points, const SweepCheckpoint* checkpoint,
                             int signal) {
  std::size_t finished = 0;
  for (const auto& p : result.points) finished += p.stop_reason != "cancelled";
  std::string note = std::string("qamsight: interrupted by ") + (signal == SIGTERM ? "SIGTERM" : "SIGINT") +
                     " at a batch boundary; " + std::to_string(finished) + " of " + std::to_string(points) +
                     " points finished (shown above), no output files written; ";
  if (checkpoint) {
    note += "every finished batch is kept in checkpoint " + checkpoint->path() +
            ": run the same command with --resume to continue";
  } else {
    note += "nothing was kept: add --checkpoint PATH to make a sweep resumable";
  }
  return note + "\n";
}

}  // namespace qamsight::cli
