// Text table of sweep results, shared by `sweep` and `demo`.
#pragma once

#include <string>

#include "qamsight/sim.hpp"

namespace qamsight::cli {
std::string sweep_table(const SweepResult& result);
}  // namespace qamsight::cli
