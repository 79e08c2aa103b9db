// Text rendering of EVM results for the terminal (`qamsight evm`, and `qamsight demo`).
#pragma once

#include <CLI/CLI.hpp>
#include <algorithm>
#include <string>
#include <utility>
#include <vector>

#include "qamsight/evm_budget.hpp"

namespace qamsight::cli {

/// The budget as printed by `qamsight evm budget`: a heading, one row per contribution (EVM in %
/// and dB, share of the composite EVM^2), the composite, the dominant contribution, the limit
/// with its margin and verdict, the simulation and the allowance when present, and the notes.
std::string evm_budget_text(const EvmBudgetReport& report);

/// Two left-aligned columns, name and value, for the one-result summaries of `evm measure` and
/// `waveform` (values can be long sentences; the right-aligned Table suits numbers).
class KeyValueText {
 public:
  void add(std::vector<std::string> row) {
    rows_.emplace_back(row.empty() ? std::string() : row[0], row.size() > 1 ? row[1] : std::string());
  }
  std::string str() const {
    std::size_t w = 0;
    for (const auto& r : rows_) w = std::max(w, r.first.size());
    std::string out;
    for (const auto& r : rows_) out += r.first + std::string(w - r.first.size() + 2, ' ') + r.second + "\n";
    return out;
  }

 private:
  std::vector<std::pair<std::string, std::string>> rows_;
};

/// "PASS" or "FAIL".
inline const char* verdict_word(bool pass) { return pass ? "PASS" : "FAIL"; }

/// Adds `evm measure` to the `evm` subcommand (cmd_evm_measure.cpp).
void add_evm_measure(CLI::App* evm);

}  // namespace qamsight::cli
