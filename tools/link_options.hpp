// Command-line options of the waveform link (pulse shaping and impairments), shared by the
// subcommands that build a link: sweep, modcod, waveform, evm.
#pragma once

#include <CLI/CLI.hpp>
#include <optional>
#include <string>

#include "qamsight/sim.hpp"

namespace qamsight::cli {

struct LinkOptions {
  int sps = 1;
  double rolloff = 0.25;
  int span = 12;
  std::string symbol_rate = "1e6";
  double phase_noise_linewidth = 0.0;
  std::string phase_noise_mask;
  double cfo_hz = 0.0;
  double phase_deg = 0.0;
  double iq_gain_db = 0.0;
  double iq_phase_deg = 0.0;
  std::string dc_offset;
  std::string amp = "none";
  double input_backoff_db = 6.0;
  double rapp_smoothness = 2.0;
  std::string adc_bits;  ///< empty = ideal front end
  double adc_loading_db = 12.0;
  std::string multipath;
  std::string tracker = "auto";
  double tracker_bandwidth = 0.01;
  std::string pilot_period = "0";
  std::string tracker_detector = "arg";
};

/// Adds --sps, --rolloff, --span, --symbol-rate and the impairment options to a subcommand.
void add_link_options(CLI::App* app, LinkOptions& o);
/// The --llr option of coded subcommands: "auto" (empty: the link's default), "exact", "max-log";
/// UsageError otherwise.
std::optional<LlrMethod> parse_llr_option(const std::string& text);
/// Fills link.pulse and link.impairments; throws UsageError / ConfigError / InputError naming
/// the option or file.
void apply_link_options(const LinkOptions& o, LinkConfig& link);

}  // namespace qamsight::cli
