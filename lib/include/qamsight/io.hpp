// io: files in and out: sweep results as JSON and CSV, baselines, atomic writes.
#pragma once

#include <string>
#include <string_view>

#include "qamsight/sim.hpp"

namespace qamsight {

/// Writes `content` to `path` through a temporary file in the same directory, flushed, synced
/// and renamed, so the requested name never holds a truncated file. Throws InputError.
void write_text_file_atomic(const std::string& path, std::string_view content);
/// Reads a whole file; throws InputError("<what> '<path>': <reason>").
std::string read_text_file(const std::string& path, std::string_view what);

/// Sweep results as JSON: a top-level object with program, version, seed, confidence,
/// snr_kind, stop_rule, link settings, complete, and a `points` array (one object per point
/// with modulation, eb_n0_db, es_n0_db, counts, rates with intervals, theory, evm_rms_pct,
/// mer_db, stop_reason). Non-finite numbers are written as null.
std::string sweep_to_json(const SweepResult& result);
/// One CSV row per point, same field names as the JSON points.
std::string sweep_to_csv(const SweepResult& result);
/// Reads a sweep JSON written by sweep_to_json (a baseline). Rates are recomputed from the
/// counts. Throws InputError naming `source` and the offending key.
SweepResult sweep_from_json(std::string_view text, const std::string& source);

}  // namespace qamsight
