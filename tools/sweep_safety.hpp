// `qamsight sweep`'s nothing-lost helpers: checkpoint set-up and the note after a signal.
#pragma once

#include <memory>
#include <string>

#include "qamsight/checkpoint.hpp"
#include "qamsight/sim.hpp"

namespace qamsight::cli {


/// Starts (or with `resume`, continues) the checkpoint at `path` and wires it into `hooks`.
/// Returns null when `path` is empty. A resume of a checkpoint that does not exist yet starts
/// one, so the same command line serves the first run and every restart.
std::unique_ptr<SweepCheckpoint> attach_checkpoint(const std::string& path, bool resume,
                                                   const SweepConfig& config, SweepHooks& hooks);

/// The note printed when a signal stopped the sweep: what is finished, what was kept, and how
/// to continue. Exit status 128 + signal follows it.
std::string interrupted_note(const SweepResult& result, std::size_t points, const SweepCheckpoint* checkpoint,
                             int signal);

}  // namespace qamsight::cli
