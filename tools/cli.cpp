// Shared pieces of the qamsight subcommands.
#include "cli.hpp"

#include <unistd.h>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>

#include "qamsight/core.hpp"

namespace qamsight::cli {

int& exit_status() {
  static int status = kOk;
  return status;
}

namespace {
std::string trim(const std::string& s) {
  const auto b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return {};
  const auto e = s.find_last_not_of(" \t");
  return s.substr(b, e - b + 1);
}
}  // namespace

double parse_real(const std::string& option, const std::string& text) {
  const std::string t = trim(text);
  double v = 0.0;
  const auto res = std::from_chars(t.data(), t.data() + t.size(), v);
  if (t.empty() || res.ec != std::errc() || res.ptr != t.data() + t.size() || !std::isfinite(v)) {
    throw UsageError(option + " = '" + text + "' is not allowed; allowed: a finite number");
  }
  return v;
}

std::uint64_t parse_count(const std::string& option, const std::string& text) {
  const std::string t = trim(text);
  double v = 0.0;
  const auto res = std::from_chars(t.data(), t.data() + t.size(), v);
  if (t.empty() || res.ec != std::errc() || res.ptr != t.data() + t.size() || !std::isfinite(v) ||
      v < 0.0 || v != std::floor(v) || v > 9.2e18) {
    throw UsageError(option + " = '" + text +
                     "' is not allowed; allowed: a whole number from 0 to 9.2e18 (such as 4096 or 1e9)");
  }
  return static_cast<std::uint64_t>(v);
}

std::vector<std::string> split_list(const std::string& text) {
  std::vector<std::string> out;
  std::size_t start = 0;
  while (start <= text.size()) {
    const auto comma = text.find(',', start);
    const std::string item = trim(text.substr(start, comma == std::string::npos ? std::string::npos : comma - start));
    if (!item.empty()) out.push_back(item);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return out;
}

std::vector<double> parse_real_list(const std::string& option, const std::string& text) {
  std::vector<double> out;
  for (const auto& item : split_list(text)) out.push_back(parse_real(option, item));
  if (out.empty()) throw UsageError(option + " = '" + text + "' is not allowed; allowed: a comma-separated list of numbers");
  return out;
}

std::vector<double> parse_range(const std::string& option, const std::string& text) {
  const auto parts = parse_real_list(option, text);
  if (parts.size() != 3) {
    throw UsageError(option + " = '" + text + "' is not allowed; allowed: MIN,MAX,STEP (three numbers)");
  }
  const double lo = parts[0], hi = parts[1], step = parts[2];
  if (!(step > 0.0) || hi < lo) {
    throw UsageError(option + " = '" + text + "' is not allowed; allowed: MIN <= MAX and STEP > 0");
  }
  const double n = std::floor((hi - lo) / step + 1e-9);
  if (n > 10000) throw UsageError(option + " = '" + text + "' is not allowed; allowed: at most 10001 values");
  std::vector<double> out;
  for (int i = 0; i <= static_cast<int>(n); ++i) {
    // Round to 12 significant decimals so 0.1 steps print as typed.
    const double v = lo + i * step;
    out.push_back(std::round(v * 1e9) / 1e9);
  }
  return out;
}

bool stderr_is_terminal() { return ::isatty(2) == 1; }

std::string Table::str() const {
  std::vector<std::size_t> w(header_.size(), 0);
  for (std::size_t c = 0; c < header_.size(); ++c) w[c] = header_[c].size();
  for (const auto& r : rows_)
    for (std::size_t c = 0; c < r.size() && c < w.size(); ++c) w[c] = std::max(w[c], r[c].size());
  std::string out;
  auto line = [&](const std::vector<std::string>& r) {
    for (std::size_t c = 0; c < w.size(); ++c) {
      const std::string cell = c < r.size() ? r[c] : "";
      if (c == 0) {
        out += cell + std::string(w[c] - cell.size(), ' ');
      } else {
        out += "  " + std::string(w[c] - cell.size(), ' ') + cell;
      }
    }
    while (!out.empty() && out.back() == ' ') out.pop_back();
    out += "\n";
  };
  line(header_);
  std::size_t total = 0;
  for (auto x : w) total += x + 2;
  out += std::string(total - 2, '-') + "\n";
  for (const auto& r : rows_) line(r);
  return out;
}

std::string fmt_fixed(double v, int decimals) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*f", decimals, v);
  return buf;
}

std::string fmt_sci(double v, int digits) {
  if (!std::isfinite(v)) return "-";
  char buf[64];
  std::snprintf(buf, sizeof buf, "%.*e", digits - 1, v);
  return buf;
}

}  // namespace qamsight::cli

#include <filesystem>
#include <map>

#include "qamsight/io.hpp"

namespace qamsight::cli {

void rethrow_with_option_names(const ConfigError& e) {
  static const std::map<std::string, std::string> names = {
      {"modulation", "--mod"},          {"modulations", "--mod"},
      {"eb_n0_db", "--ebn0"},           {"es_n0_db", "--esn0"},
      {"min_errors", "--min-errors"},   {"max_bits", "--max-bits"},
      {"confidence", "--confidence"},   {"threads", "--threads"},
      {"frame_symbols", "--frame-symbols"}, {"impl_loss_db", "--impl-loss-db"},
      {"max_relative_width", "--max-rel-width"}, {"target_ber", "--target-ber"},
      {"samples_per_symbol", "--sps"},  {"roll_off", "--rolloff"},
      {"span_symbols", "--span"},       {"symbol_rate_hz", "--symbol-rate"},
      {"linewidth_hz", "--phase-noise-linewidth"}, {"offset_hz", "--cfo-hz"},
      {"rotation_deg", "--phase-deg"},  {"gain_db", "--iq-gain-db"},
      {"phase_deg", "--iq-phase-deg"},  {"input_backoff_db", "--input-backoff-db"},
      {"smoothness", "--rapp-smoothness"}, {"bits", "--adc-bits"},
      {"loading_db", "--adc-loading-db"}, {"tracker_bandwidth", "--tracker-bandwidth"},
      {"pilot_period", "--pilot-period"}, {"offset", "--dc-offset"},
      {"tracker_detector", "--tracker-detector"}, {"noise_variance", "--tracker-detector"},
      {"delay_samples", "--multipath"}, {"taps", "--multipath"},
      {"sample_rate_hz", "--symbol-rate"}, {"code", "--code"},
      {"target_fer", "--target-fer"}, {"min_frame_errors", "--min-frame-errors"},
  };
  const auto it = names.find(e.parameter());
  if (it == names.end()) throw e;
  throw ConfigError(it->second, e.value(), e.allowed());
}

void write_output(const std::string& path, const std::string& content, const char* what) {
  std::fflush(stdout);  // keep the table ahead of the file notes when both go to one place
  write_text_file_atomic(path, content);
  std::fprintf(stderr, "qamsight: wrote %s %s\n", what, path.c_str());
}


namespace {
void require_output_path(const std::string& option, const std::string& path) {
  if (path.empty()) return;
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::error_code ec;
  std::string problem;
  if (!target.has_filename()) {
    problem = "it names no file";
  } else if (fs::is_directory(target, ec)) {
    problem = "'" + path + "' is a folder";
  } else if (!fs::is_directory(dir, ec)) {
    problem = fs::exists(dir, ec) ? "'" + dir.string() + "' is not a folder" : "folder '" + dir.string() + "' does not exist";
  }
  if (!problem.empty()) {
    throw UsageError(option + " = '" + path + "' is not allowed; allowed: a file name in an existing folder (" +
                     problem + ")");
  }
}
}  // namespace

void require_output_paths(std::initializer_list<std::pair<const char*, const std::string&>> outputs) {
  for (const auto& [option, path] : outputs) require_output_path(option, path);
}

}  // namespace qamsight::cli
