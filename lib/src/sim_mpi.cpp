// sim_mpi: the MPI frame executor; compiled to nothing unless the library is built with QAMSIGHT_MPI.
#if defined(QAMSIGHT_MPI)

#include "qamsight/sim_mpi.hpp"

#include <mpi.h>

#include <climits>
#include <type_traits>
#include <vector>

namespace qamsight {

namespace {

// FrameResult travels as raw bytes: integers and doubles are copied bit for bit.
static_assert(std::is_trivially_copyable_v<FrameResult>, "FrameResult must be a plain struct for MPI");

class MpiExecutor final : public FrameExecutor {
 public:
  explicit MpiExecutor(unsigned threads) : local_(make_thread_executor(threads)) {
    MPI_Comm_rank(MPI_COMM_WORLD, &rank_);
    MPI_Comm_size(MPI_COMM_WORLD, &size_);
    counts_.resize(static_cast<std::size_t>(size_));
    displs_.resize(static_cast<std::size_t>(size_));
  }

  void run(const Link& link, std::size_t point, std::uint64_t first, std::span<FrameResult> out) override {
    const std::size_t n = out.size(), ranks = static_cast<std::size_t>(size_);
    QAMSIGHT_ASSERT(n * sizeof(FrameResult) <= static_cast<std::size_t>(INT_MAX), "batch too large for MPI");
    auto lo = [&](std::size_t r) { return n * r / ranks; };
    for (std::size_t r = 0; r < ranks; ++r) {
      counts_[r] = static_cast<int>((lo(r + 1) - lo(r)) * sizeof(FrameResult));
      displs_[r] = static_cast<int>(lo(r) * sizeof(FrameResult));
    }
    const std::size_t mine = lo(static_cast<std::size_t>(rank_));
    const std::size_t count = lo(static_cast<std::size_t>(rank_) + 1) - mine;
    if (count > 0) local_->run(link, point, first + mine, out.subspan(mine, count));
    MPI_Allgatherv(MPI_IN_PLACE, 0, MPI_DATATYPE_NULL, out.data(), counts_.data(), displs_.data(), MPI_BYTE,
                   MPI_COMM_WORLD);
  }

 private:
  std::unique_ptr<FrameExecutor> local_;
  int rank_ = 0, size_ = 1;
  std::vector<int> counts_, displs_;
};

}  // namespace

std::unique_ptr<FrameExecutor> make_mpi_executor(unsigned threads_per_rank) {
  return std::make_unique<MpiExecutor>(threads_per_rank);
}

int mpi_world_rank() {
  int r = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &r);
  return r;
}

int mpi_world_size() {
  int s = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &s);
  return s;
}

}  // namespace qamsight

#endif
