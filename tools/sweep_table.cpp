// Text table of sweep results, shared by `sweep` and `demo`.
#include "sweep_table.hpp"

#include "cli.hpp"

namespace qamsight::cli {

namespace {

// Coded sweeps: BER and FER of the information bits and codewords; the AWGN theory column
// (uncoded) is left out and SER is the raw channel symbol error rate.
std::string coded_table(const SweepResult& r, const std::string& ci) {
  Table t({"modulation", "code", "Eb/N0 dB", "Es/N0 dB", "bits", "errors", "BER", ci, "frames", "frame errors",
           "FER", "FER " + ci, "raw SER", "stop"});
  for (const auto& p : r.points) {
    const bool bound = p.counts.bit_errors == 0;
    const bool fer_bound = p.counts.frame_errors == 0;
    t.add({p.spec.modulation, p.code, fmt_fixed(p.spec.eb_n0_db, 2), fmt_fixed(p.spec.es_n0_db, 2),
           fmt_sci(static_cast<double>(p.counts.bits), 3), std::to_string(p.counts.bit_errors),
           bound ? "<" + fmt_sci(p.ber_high, 3) : fmt_sci(p.ber, 3),
           "[" + fmt_sci(p.ber_low, 3) + ", " + fmt_sci(p.ber_high, 3) + "]", std::to_string(p.counts.frames),
           std::to_string(p.counts.frame_errors), fer_bound ? "<" + fmt_sci(p.fer_high, 3) : fmt_sci(p.fer, 3),
           "[" + fmt_sci(p.fer_low, 3) + ", " + fmt_sci(p.fer_high, 3) + "]", fmt_sci(p.ser, 3), p.stop_reason});
  }
  return t.str();
}

}  // namespace

std::string sweep_table(const SweepResult& r) {
  const std::string ci = fmt_fixed(100.0 * r.config.confidence, 0) + "% interval";
  if (!r.config.link.code.empty()) return coded_table(r, ci);
  Table t({"modulation", "Eb/N0 dB", "Es/N0 dB", "bits", "errors", "BER", ci, "theory", "SER", "EVM %", "stop"});
  for (const auto& p : r.points) {
    const bool bound = p.counts.bit_errors == 0;
    t.add({p.spec.modulation, fmt_fixed(p.spec.eb_n0_db, 2), fmt_fixed(p.spec.es_n0_db, 2),
           fmt_sci(static_cast<double>(p.counts.bits), 3), std::to_string(p.counts.bit_errors),
           bound ? "<" + fmt_sci(p.ber_high, 3) : fmt_sci(p.ber, 3),
           "[" + fmt_sci(p.ber_low, 3) + ", " + fmt_sci(p.ber_high, 3) + "]", fmt_sci(p.ber_theory, 3),
           fmt_sci(p.ser, 3), fmt_fixed(p.evm.rms_percent(), 2), p.stop_reason});
  }
  return t.str();
}

}  // namespace qamsight::cli
