// sync: receiver-side synchronisation; carrier phase tracking at symbol rate.
#pragma once

#include <cstddef>
#include <cstdint>
#include <span>

#include "qamsight/core.hpp"
#include "qamsight/modem.hpp"

namespace qamsight {

/// Gains of the loop filter F(z) = kp + ki / (1 - z^-1) of a phase-locked loop whose NCO is an
/// accumulator z^-1 / (1 - z^-1) and whose phase detector has unit gain.
struct PhaseLoopGains {
  double kp = 0.0;  ///< proportional gain (rad per rad of error)
  double ki = 0.0;  ///< integral gain (rad per update per rad of error); 0 for a first-order loop
};

/// Gains for a loop noise bandwidth b = B_L T_u (one-sided, normalised to the update interval
/// T_u) and damping zeta.
///
/// Second order: the standard design from the continuous-time loop (F. M. Gardner,
/// Phaselock Techniques, 3rd ed., Wiley 2005: B_L = (omega_n / 2)(zeta + 1/(4 zeta))) mapped to
/// discrete time by the bilinear transform (as in M. Rice, Digital Communications: A
/// Discrete-Time Approach, Pearson 2009, appendix C; equation numbers from memory):
///   theta = b / (zeta + 1/(4 zeta)),  D = 1 + 2 zeta theta + theta^2,
///   kp = 4 zeta theta / D,  ki = 4 theta^2 / D.
/// The closed loop's exact noise bandwidth is within 1 % of b for b <= 0.01 and within 10 %
/// for b <= 0.1.
/// First order: F(z) = kp, closed loop kp z^-1 / (1 - (1 - kp) z^-1), whose noise bandwidth
/// (1/2) sum h[n]^2 = kp / (2 (2 - kp)) is exactly b for kp = 4 b / (1 + 2 b).
PhaseLoopGains phase_loop_gains(double loop_bandwidth, double damping, unsigned order);

/// Phase detector of the tracker.
///   arg:  e = arg(y conj(d)), d the nearest point (or the known symbol): unit gain, the error
///         angle itself. Made for the EVM regime (mostly correct decisions); at low Es/N0 wrong
///         decisions and the equal weight of small, noisy samples make it slip.
///   soft: e = Im(y conj(s)), s = E[d | y] the posterior mean symbol for AWGN of variance N0
///         (soft_symbol; the known symbol at pilots): the soft-decision-directed detector, an
///         approximation of the maximum-likelihood phase detector. Its gain is E|d|^2 = 1 at high
///         SNR and falls at low SNR as the posterior mean shrinks (the loop narrows there), and
///         its jitter at high SNR is N0 B_L T against N0 B_L T E[1/|d|^2] for arg (lower for
///         QAM with several rings). Needs the noise variance at the tracker's input.
enum class PhaseDetector { arg, soft };

/// Posterior mean E[d | y] of a uniformly random constellation point d after complex AWGN of
/// total variance n0 (n0 / 2 per axis): sum_i s_i exp(-|y - s_i|^2 / n0) / sum_i exp(...),
/// per axis for square QAM (the prior and the noise factor), over every point otherwise. Terms
/// more than e^-40 below the largest are skipped (a relative 4e-18). n0 > 0.
cf64 soft_symbol(const Constellation& constellation, cf64 y, double n0) noexcept;

/// Decision-directed (optionally pilot-aided) carrier phase tracker at symbol rate.
///
/// Loop (theta[n]: phase estimate applied to symbol n; omega: frequency, rad per symbol):
///   y[n] = x[n] e^{-j theta[n]},   e[n] = arg(y[n] conj(d[n]))   (unit detector gain; or the
///                                  soft detector, see PhaseDetector),
///   at a symbol that updates the loop:  omega += ki e[n] / U,  theta += kp e[n],
///   at every symbol:                    theta[n+1] = theta[n] (+ the update) + omega,
/// with d[n] the nearest constellation point (decision-directed) or the known symbol (pilot) and
/// U the update interval in symbols (1, or P for the pilots-only loop). Per update this is the
/// loop of phase_loop_gains() with integrator U omega. Phases are kept in double.
///
/// What it assumes: symbols at one sample per symbol after matched filtering and timing, with
/// the receiver's gain right (unit-energy constellation); the constellation is known; the SNR is
/// high enough for mostly correct decisions; the initial phase lies within the constellation's
/// rotational ambiguity (+-45 degrees for square QAM) unless pilots resolve it. Cycle slips are
/// not detected or corrected; decision-directed tracking keeps the ambiguity (a QPSK loop that
/// starts 90 degrees off locks 90 degrees off).
///
/// Pilots: with pilot_period P > 0, symbols k = 0, P, 2P, ... (counted from construction or
/// reset()) are known and read from the `reference` span handed to process(); the first
/// `preamble_symbols` symbols are also known (a pilot-aided start). Between pilots the loop
/// either keeps updating from decisions (decisions_between_pilots) or only advances its NCO:
/// the pilots-only loop updates once per P symbols with gains designed for B_L P T.
struct PhaseTrackerConfig {
  double loop_bandwidth = 0.01;          ///< B_L T, normalised to the symbol rate; > 0, at most 0.1
  double damping = 0.7071;               ///< zeta of the second-order loop; 0.25 to 4
  unsigned order = 2;                    ///< 1 or 2
  std::size_t pilot_period = 0;          ///< 0 = no pilots; else 1 to 2^20 (1 = every symbol known)
  std::size_t preamble_symbols = 0;      ///< known symbols at the start; 0 to 2^30
  bool decisions_between_pilots = true;  ///< false: pilots-only loop (needs pilot_period > 0)
  double initial_phase_rad = 0.0;        ///< -pi to pi
  double initial_frequency_rad = 0.0;    ///< rad per symbol; -pi/8 to pi/8
  PhaseDetector detector = PhaseDetector::arg;
  double noise_variance = 0.0;           ///< N0 at the input, per symbol (soft detector: > 0, at most 1e9)
};

class PhaseTracker {
 public:
  /// Throws ConfigError for bad settings (pilots-only needs loop_bandwidth x pilot_period <= 0.1).
  PhaseTracker(const PhaseTrackerConfig& config, const Constellation& constellation);
  const PhaseTrackerConfig& config() const noexcept { return config_; }
  /// Gains of per-symbol updates and of pilots-only updates (equal when every symbol updates).
  PhaseLoopGains symbol_gains() const noexcept { return symbol_gains_; }
  PhaseLoopGains pilot_gains() const noexcept { return pilot_gains_; }

  /// out[n] = in[n] e^{-j theta[n]}. `reference` holds the known symbols at the same indices as
  /// `in` (only pilot and preamble positions are read; it may be empty when there are none);
  /// `phase_estimate`, if not empty, receives theta[n] (rad, wrapped to (-pi, pi]).
  void process(std::span<const cf32> in, std::span<cf32> out, std::span<const cf32> reference = {},
               std::span<double> phase_estimate = {}) noexcept;

  /// Phase estimate for the next symbol (rad, (-pi, pi]) and frequency estimate (rad/symbol).
  double phase_rad() const noexcept { return theta_; }
  double frequency_rad() const noexcept { return omega_; }
  std::uint64_t symbols() const noexcept { return index_; }
  /// RMS of the detector error e[n] over the symbols that updated the loop since reset()
  /// (includes decision errors; NaN before the first update).
  double error_rms_rad() const noexcept;
  void reset() noexcept;
  /// Changes the noise variance the soft detector assumes (a receiver whose gain changed);
  /// throws ConfigError unless 0 < n0 <= 1e9 when the detector is soft.
  void set_noise_variance(double n0);

 private:
  PhaseTrackerConfig config_;
  Constellation constellation_;
  PhaseLoopGains symbol_gains_, pilot_gains_;
  double theta_ = 0.0, omega_ = 0.0;
  std::uint64_t index_ = 0;
  double error_sq_ = 0.0;
  std::uint64_t updates_ = 0;
};

}  // namespace qamsight
