// sim_mpi: a frame executor that spreads the frames of each batch over MPI ranks (QAMSIGHT_MPI builds).
#pragma once

#include <memory>

#include "qamsight/sim.hpp"

namespace qamsight {

/// Runs the frames of each batch split over the ranks of MPI_COMM_WORLD: rank r of R takes the
/// contiguous share [n r / R, n (r + 1) / R) of the batch's n frames and runs it on its own thread
/// pool (`threads_per_rank`, 0 = all hardware threads). The FrameResults (integer counts and the
/// double EVM sums, copied as raw bytes, so bit-exact) are then gathered in frame order to every
/// rank (MPI_Allgatherv in place), so every rank merges the same frames in the same order and
/// evaluates the same stopping rule: the sweep result equals the single-process run exactly.
///
/// Every rank must call run_sweep with the same configuration and this executor. MPI must be
/// initialised (MPI_Init_thread, at least MPI_THREAD_FUNNELED: only the calling thread talks to
/// MPI) before the executor is made and finalised after it is destroyed. Declared in every build;
/// defined only when the library is built with QAMSIGHT_MPI=ON.
std::unique_ptr<FrameExecutor> make_mpi_executor(unsigned threads_per_rank);

/// This process's rank and the number of ranks in MPI_COMM_WORLD (MPI must be initialised).
int mpi_world_rank();
int mpi_world_size();

}  // namespace qamsight
