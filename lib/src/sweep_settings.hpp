// Private: the settings of a sweep as JSON, one definition shared by the result writer and
// anything that must recognise the same sweep (checkpoints).
#pragma once

#include <nlohmann/json.hpp>

#include "qamsight/sim.hpp"

namespace qamsight::detail {

/// Everything that determines a sweep's counts: seed, confidence, SNR kind and grid,
/// modulations, stopping rule and the link settings (threads and output paths excluded).
nlohmann::ordered_json sweep_settings_json(const SweepConfig& config);
/// The link settings alone (pulse shaping, impairments, code, user stage name).
nlohmann::ordered_json link_settings_json(const LinkConfig& link);

}  // namespace qamsight::detail
