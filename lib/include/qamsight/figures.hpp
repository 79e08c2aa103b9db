// figures: the standard qamsight plots built from results (waterfalls, theory curves).
#pragma once

#include <string>
#include <vector>

#include "qamsight/sim.hpp"

namespace qamsight {

/// "16-QAM", "QPSK", "8-PSK" for a modulation name ("16qam", ...); the name itself otherwise.
std::string modulation_display_name(const std::string& modulation);

/// BER against Eb/N0 (or Es/N0, following the sweep's SNR kind): measured points with their
/// confidence intervals as bars (zero-error points as upper bounds) over exact AWGN theory.
std::string waterfall_svg(const SweepResult& result, const std::string& title = {});

/// AWGN theory BER curves of the named modulations over the Eb/N0 grid.
std::string theory_svg(const std::vector<std::string>& modulations, const std::vector<double>& eb_n0_db);

}  // namespace qamsight
