// Private: the settings of a sweep as JSON (see sweep_settings.hpp).
#include "sweep_settings.hpp"

#include <cmath>

namespace qamsight::detail {

using nlohmann::ordered_json;

ordered_json link_settings_json(const LinkConfig& link) {
  ordered_json j;
  j["frame_symbols"] = link.frame_symbols;
  j["impl_loss_db"] = link.impl_loss_db;
  j["samples_per_symbol"] = link.pulse.samples_per_symbol;
  if (link.pulse.samples_per_symbol > 1) {
    j["roll_off"] = link.pulse.roll_off;
    j["span_symbols"] = link.pulse.span_symbols;
  }
  if (link.impairments.any()) {
    const auto& im = link.impairments;
    ordered_json i;
    i["symbol_rate_hz"] = im.symbol_rate_hz;
    i["iq_gain_db"] = im.iq_gain_db;
    i["iq_phase_deg"] = im.iq_phase_deg;
    i["dc_offset"] = {im.dc_offset.real(), im.dc_offset.imag()};
    i["amplifier"] = im.amplifier == AmplifierKind::none ? "none" : im.amplifier == AmplifierKind::saleh ? "saleh" : "rapp";
    if (im.amplifier != AmplifierKind::none) i["input_backoff_db"] = im.input_backoff_db;
    if (im.amplifier == AmplifierKind::rapp) i["rapp_smoothness"] = im.rapp_smoothness;
    i["multipath"] = ordered_json::array();
    for (const auto& t : im.multipath) i["multipath"].push_back({t.delay_samples, t.gain.real(), t.gain.imag()});
    i["cfo_hz"] = im.cfo_hz;
    i["phase_deg"] = im.phase_deg;
    i["phase_noise_linewidth_hz"] = im.phase_noise_linewidth_hz;
    if (im.phase_noise_mask) {
      ordered_json m = ordered_json::array();
      for (const auto& pt : im.phase_noise_mask->points()) m.push_back({pt.offset_hz, pt.dbc_hz});
      i["phase_noise_mask"] = m;
      i["phase_noise_rms_deg"] = im.phase_noise_mask->rms_phase_deg();
    } else {
      i["phase_noise_mask"] = nullptr;
    }
    i["adc_bits"] = im.adc_bits;
    if (im.adc_bits) i["adc_loading_db"] = im.adc_loading_db;
    i["phase_tracker"] = im.tracking();
    if (im.tracking()) {
      i["tracker_bandwidth"] = im.tracker_bandwidth;
      i["pilot_period"] = im.pilot_period;
      // Only when not the default, so earlier settings (checkpoints, baselines) stay as they were.
      if (im.tracker_detector == PhaseDetector::soft) i["tracker_detector"] = "soft";
    }
    j["impairments"] = i;
  }
  j["user_stage"] = link.stage && link.stage->process ? ordered_json(link.stage->name) : ordered_json(nullptr);
  if (!link.code.empty()) {  // only when coded, so uncoded settings stay as they were
    j["code"] = link.code;
    j["llr"] = !link.llr ? "auto" : *link.llr == LlrMethod::exact ? "exact" : "max-log";
  }
  return j;
}

ordered_json sweep_settings_json(const SweepConfig& c) {
  ordered_json j;
  j["seed"] = c.seed;
  j["confidence"] = c.confidence;
  j["snr_kind"] = c.snr_kind == SnrKind::eb_n0 ? "eb_n0" : "es_n0";
  j["modulations"] = c.modulations;
  j["snr_db"] = c.snr_db;
  j["stop_rule"] = {{"min_errors", c.stop.min_bit_errors},
                    {"max_bits", c.stop.max_bits},
                    {"max_relative_width", c.stop.max_relative_width}};
  if (c.stop.min_frame_errors > 0) j["stop_rule"]["min_frame_errors"] = c.stop.min_frame_errors;
  j["link"] = link_settings_json(c.link);
  return j;
}

}  // namespace qamsight::detail
