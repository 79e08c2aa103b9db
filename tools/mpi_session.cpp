// mpi_session: MPI start-up and the MPI sweep executor for the CLI (no-ops without QAMSIGHT_MPI).
#include "mpi_session.hpp"

#include <cstdio>
#include <cstdlib>

#if defined(QAMSIGHT_MPI)
#include <mpi.h>

#include "qamsight/sim_mpi.hpp"
#endif

namespace qamsight::cli {

namespace {
bool g_active = false;
int g_rank = 0;
#if defined(QAMSIGHT_MPI)
bool g_initialised = false;
bool launched_by_mpi() {
  return std::getenv("OMPI_COMM_WORLD_SIZE") || std::getenv("PMIX_RANK") || std::getenv("PMI_SIZE");
}
#endif
}  // namespace

MpiSession::MpiSession(int& argc, char**& argv) {
#if defined(QAMSIGHT_MPI)
  if (!launched_by_mpi()) return;
  int provided = 0;
  MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided);
  g_initialised = true;
  int size = 1;
  MPI_Comm_rank(MPI_COMM_WORLD, &g_rank);
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  g_active = size > 1;
  if (g_rank != 0) {
    (void)std::freopen("/dev/null", "w", stdout);
    (void)std::freopen("/dev/null", "w", stderr);
  }
#else
  (void)argc;
  (void)argv;
#endif
}

MpiSession::~MpiSession() {
#if defined(QAMSIGHT_MPI)
  if (g_initialised) MPI_Finalize();
#endif
}

bool mpi_active() noexcept { return g_active; }
bool is_output_rank() noexcept { return g_rank == 0; }

std::string mpi_build_tag() {
#if defined(QAMSIGHT_MPI)
  return " (MPI)";
#else
  return "";
#endif
}

std::unique_ptr<FrameExecutor> make_sweep_executor(unsigned threads) {
#if defined(QAMSIGHT_MPI)
  if (g_active) return make_mpi_executor(threads);
#endif
  (void)threads;
  return nullptr;
}

}  // namespace qamsight::cli
