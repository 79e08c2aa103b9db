// Shared pieces of the qamsight subcommands: exit codes, number parsing, output helpers.
#pragma once

#include <CLI/CLI.hpp>
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "qamsight/core.hpp"
#include "qamsight/link.hpp"

namespace qamsight::cli {

/// Exit statuses of every subcommand.
enum Exit : int { kOk = 0, kFail = 1, kUsage = 2 };

/// Set by a subcommand's callback; main() returns it.
int& exit_status();

/// A usage error found after parsing (contradictory options, bad list syntax): exit 2.
struct UsageError : std::runtime_error {
  using std::runtime_error::runtime_error;
};

/// Parses a count such as "4096", "1e9" or "2.5e6" (a non-negative whole number that fits
/// in 63 bits). Throws UsageError naming the option.
std::uint64_t parse_count(const std::string& option, const std::string& text);
/// Parses a finite real number; throws UsageError naming the option.
double parse_real(const std::string& option, const std::string& text);
/// Parses "a,b,c" into finite reals.
std::vector<double> parse_real_list(const std::string& option, const std::string& text);
/// Parses "MIN,MAX,STEP" into MIN, MIN+STEP, ... up to MAX inclusive (within 1e-9 of a step).
std::vector<double> parse_range(const std::string& option, const std::string& text);
/// Splits "a,b,c" into trimmed, non-empty strings.
std::vector<std::string> split_list(const std::string& text);

/// True when standard error is a terminal (progress lines are shown only then, by default).
bool stderr_is_terminal();

/// Fixed-width text table for stdout.
class Table {
 public:
  explicit Table(std::vector<std::string> header) : header_(std::move(header)) {}
  void add(std::vector<std::string> row) { rows_.push_back(std::move(row)); }
  std::string str() const;

 private:
  std::vector<std::string> header_;
  std::vector<std::vector<std::string>> rows_;
};

/// Number formats for tables.
std::string fmt_fixed(double v, int decimals);
std::string fmt_sci(double v, int digits = 3);

/// Registration of subcommands (one file each).
void register_sweep(CLI::App& app);
void register_theory(CLI::App& app);
void register_check(CLI::App& app);
void register_demo(CLI::App& app);
void register_link(CLI::App& app);
void register_modcod(CLI::App& app);
void register_evm(CLI::App& app);
void register_waveform(CLI::App& app);
void register_report(CLI::App& app);

// Text of `qamsight link` (also printed by `qamsight demo`): the whole report, or only the
// MODCOD margins, the pass table, warnings and cautions.
std::string link_report_text(const LinkScenario& scenario, const LinkAnalysis& analysis);
std::string link_modcod_text(const LinkScenario& scenario, const LinkAnalysis& analysis);

}  // namespace qamsight::cli

namespace qamsight::cli {
/// Rethrows a library ConfigError with the parameter renamed to its command-line option
/// (eb_n0_db -> --ebn0, ...), so messages name what the user typed.
[[noreturn]] void rethrow_with_option_names(const ConfigError& e);
/// Writes a text output file atomically and reports it on stderr.
void write_output(const std::string& path, const std::string& content, const char* what);
/// Checks before any work or output that each non-empty path (the value of its option) can become
/// an output file: its folder exists and it is not a folder itself. UsageError otherwise, so a
/// failed run leaves no partial set of outputs.
void require_output_paths(std::initializer_list<std::pair<const char*, const std::string&>> outputs);
}  // namespace qamsight::cli
