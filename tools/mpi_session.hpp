// mpi_session: MPI start-up for the CLI when launched by mpirun/srun, and the sweep's MPI executor.
#pragma once

#include <memory>
#include <string>

#include "qamsight/sim.hpp"

namespace qamsight::cli {

/// Initialises MPI (MPI_THREAD_FUNNELED) when the program is built with QAMSIGHT_MPI and was
/// started by an MPI launcher (OpenMPI's mpirun sets OMPI_COMM_WORLD_SIZE; Slurm's srun with
/// PMIx/PMI sets PMIX_RANK or PMI_SIZE), and finalises it on destruction. On ranks other than 0
/// standard output and standard error are sent to /dev/null, so only rank 0 prints.
class MpiSession {
 public:
  MpiSession(int& argc, char**& argv);
  ~MpiSession();
  MpiSession(const MpiSession&) = delete;
  MpiSession& operator=(const MpiSession&) = delete;
};

/// True when MPI is running with more than one rank.
bool mpi_active() noexcept;
/// True on the rank that prints and writes files (rank 0, or the only process).
bool is_output_rank() noexcept;
/// " (MPI)" in builds with MPI support, "" otherwise (for --version).
std::string mpi_build_tag();
/// The sweep executor: frames split over the ranks when MPI is active (threads per rank as
/// given), nullptr otherwise (the sweep then uses its own thread pool).
std::unique_ptr<FrameExecutor> make_sweep_executor(unsigned threads);

}  // namespace qamsight::cli
