// regression: the statistical gate that tells a real BER regression from Monte-Carlo noise.
#pragma once

#include <span>
#include <string>
#include <vector>

#include "qamsight/sim.hpp"

namespace qamsight {

struct GateConfig {
  double confidence = 0.99;  ///< family-wise: the gate's false-alarm rate is 1 - confidence
  bool holm = true;          ///< Holm step-down correction across points (else per point)
  double target_ber = 1e-4;  ///< where implementation loss is reported
};

/// One point's verdict.
struct GateRow {
  PointResult point;
  bool tested = false;       ///< false if there is no reference (no theory / no baseline match)
  double reference_ber = 0;  ///< theory, or the baseline's measured BER
  double p_value = 1;        ///< theory: two-sided central exact binomial; baseline: one-sided increase
  double alpha = 0;          ///< the (Holm-adjusted) level this point was tested at
  double interval_low = 0, interval_high = 1;  ///< exact interval at 1 - alpha (theory check)
  bool failed = false;
  std::string note;
};

/// Eb/N0 at the target BER, from the measured curve and from the reference.
struct ImplementationLoss {
  std::string modulation;
  double target_ber = 0;
  bool available = false;
  double measured_eb_n0_db = 0;   ///< interpolated in log BER between bracketing points
  double reference_eb_n0_db = 0;  ///< theory, or the baseline's curve
  double loss_db = 0;             ///< measured - reference (positive = worse)
  std::string note;
};

struct GateReport {
  std::string kind;  ///< "theory" or "baseline"
  GateConfig config;
  std::vector<GateRow> rows;
  std::vector<ImplementationLoss> losses;
  bool pass = true;
};

/// Every point's exact interval at the Holm-adjusted level must contain the AWGN theory BER.
GateReport check_against_theory(const SweepResult& result, const GateConfig& config = {});
/// Flags points whose BER is significantly higher than the baseline's at the same modulation
/// and SNR (conditional binomial test, Holm across matched points).
GateReport check_against_baseline(const SweepResult& result, const SweepResult& baseline,
                                  const GateConfig& config = {});
/// Eb/N0 where the measured curve crosses target_ber (log-linear interpolation between the
/// bracketing measured points); NaN if the curve does not bracket it.
double eb_n0_at_ber(const std::vector<PointResult>& curve, double target_ber);
/// Holm's step-down procedure (S. Holm, Scand. J. Statist. 6, 1979): which hypotheses are
/// rejected at family-wise level alpha. The i-th smallest p-value is compared with
/// alpha / (m - i + 1), stopping at the first that is not below its threshold.
std::vector<bool> holm_reject(const std::vector<double>& p_values, double alpha);
/// JUnit XML of a report, one test case per point (for CI systems).
std::string gate_junit_xml(const GateReport& report);

}  // namespace qamsight
