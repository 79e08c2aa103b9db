// io: sweep results to and from JSON/CSV, atomic file writes.
#include "qamsight/io.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <nlohmann/json.hpp>
#include <random>
#include <sstream>

#include "sweep_settings.hpp"

namespace qamsight {

using nlohmann::ordered_json;

void write_text_file_atomic(const std::string& path, std::string_view content) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::random_device rd;
  std::string tmp_name(1, '.');  // built stepwise: GCC 12 warns falsely on "." + string
  tmp_name.append(target.filename().string()).append(".tmp").append(std::to_string(rd() % 1000000u));
  const fs::path tmp = dir / tmp_name;
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) throw InputError("cannot write '" + path + "': " + std::strerror(errno));
  std::size_t done = 0;
  while (done < content.size()) {
    const ssize_t w = ::write(fd, content.data() + done, content.size() - done);
    if (w < 0) {
      if (errno == EINTR) continue;
      const int e = errno;
      ::close(fd);
      ::unlink(tmp.c_str());
      throw InputError("cannot write '" + path + "': " + std::strerror(e));
    }
    done += static_cast<std::size_t>(w);
  }
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    throw InputError("cannot write '" + path + "': " + std::strerror(e));
  }
  if (::rename(tmp.c_str(), target.c_str()) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    throw InputError("cannot write '" + path + "': " + std::strerror(e));
  }
}

std::string read_text_file(const std::string& path, std::string_view what) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    throw InputError(std::string(what) + " '" + path + "': is a directory");
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(std::string(what) + " '" + path + "': " + std::strerror(errno));
  std::ostringstream ss;
  ss << in.rdbuf();
  if (in.bad()) throw InputError(std::string(what) + " '" + path + "': read error");
  return ss.str();
}

namespace {

ordered_json number(double v) { return std::isfinite(v) ? ordered_json(v) : ordered_json(nullptr); }

ordered_json point_json(const PointResult& p) {
  ordered_json j;
  j["modulation"] = p.spec.modulation;
  if (!p.code.empty()) {  // only for coded points: uncoded files keep their columns
    j["code"] = p.code;
    j["code_rate"] = p.code_rate;
  }
  j["eb_n0_db"] = p.spec.eb_n0_db;
  j["es_n0_db"] = p.spec.es_n0_db;
  j["bits"] = p.counts.bits;
  j["bit_errors"] = p.counts.bit_errors;
  j["ber"] = number(p.ber);
  j["ber_low"] = number(p.ber_low);
  j["ber_high"] = number(p.ber_high);
  j["symbols"] = p.counts.symbols;
  j["symbol_errors"] = p.counts.symbol_errors;
  j["ser"] = number(p.ser);
  j["ser_low"] = number(p.ser_low);
  j["ser_high"] = number(p.ser_high);
  j["frames"] = p.counts.frames;
  j["frame_errors"] = p.counts.frame_errors;
  j["fer"] = number(p.fer);
  j["fer_low"] = number(p.fer_low);
  j["fer_high"] = number(p.fer_high);
  j["ber_theory"] = number(p.ber_theory);
  j["ser_theory"] = number(p.ser_theory);
  j["evm_rms_pct"] = number(p.evm.rms_percent());
  j["isi_loss_db"] = number(p.isi_loss_db);
  j["mer_db"] = number(p.evm.mer_db());
  j["stop_reason"] = p.stop_reason;
  j["seconds"] = p.seconds;
  return j;
}

}  // namespace

std::string sweep_to_json(const SweepResult& r) {
  ordered_json j;
  j["program"] = "qamsight";
  j["version"] = std::string(version());
  j["kind"] = "sweep";
  const ordered_json settings = detail::sweep_settings_json(r.config);
  for (const char* key : {"seed", "confidence", "snr_kind", "stop_rule", "link"}) j[key] = settings.at(key);
  j["complete"] = r.complete;
  j["points"] = ordered_json::array();
  for (const auto& p : r.points) j["points"].push_back(point_json(p));
  return j.dump(2) + "\n";
}

std::string sweep_to_csv(const SweepResult& r) {
  std::string out;
  bool header = true;
  for (const auto& p : r.points) {
    const ordered_json j = point_json(p);
    if (header) {
      for (auto it = j.begin(); it != j.end(); ++it) out += (it == j.begin() ? "" : ",") + it.key();
      out += "\n";
      header = false;
    }
    bool first = true;
    for (const auto& v : j) {
      if (!first) out += ",";
      first = false;
      if (v.is_null()) continue;
      if (v.is_string()) out += v.get<std::string>();
      else if (v.is_number_float()) out += format_number(v.get<double>());
      else out += v.dump();
    }
    out += "\n";
  }
  return out;
}

namespace {

const ordered_json& member(const ordered_json& obj, const char* key, const std::string& source,
                           const std::string& where) {
  if (!obj.is_object() || !obj.contains(key)) {
    throw InputError(source + ": missing key '" + where + key + "'");
  }
  return obj.at(key);
}

std::uint64_t count_of(const ordered_json& obj, const char* key, const std::string& source,
                       const std::string& where) {
  const auto& v = member(obj, key, source, where);
  if (!v.is_number_unsigned() && !(v.is_number_integer() && v.get<std::int64_t>() >= 0)) {
    throw InputError(source + ": key '" + where + key + "' must be a non-negative integer");
  }
  return v.get<std::uint64_t>();
}

double real_of(const ordered_json& obj, const char* key, const std::string& source, const std::string& where) {
  const auto& v = member(obj, key, source, where);
  if (!v.is_number() || !std::isfinite(v.get<double>())) {
    throw InputError(source + ": key '" + where + key + "' must be a finite number");
  }
  return v.get<double>();
}

}  // namespace

SweepResult sweep_from_json(std::string_view text, const std::string& source) {
  ordered_json j;
  try {
    j = ordered_json::parse(text);
  } catch (const ordered_json::exception& e) {  // parse_error, and out_of_range for 1e999
    throw InputError(source + ": not valid JSON (" + e.what() + ")");
  }
  if (!j.is_object()) throw InputError(source + ": top level must be a JSON object");
  const auto& pts = member(j, "points", source, "");
  if (!pts.is_array()) throw InputError(source + ": key 'points' must be an array");
  SweepResult r;
  if (j.contains("seed") && j["seed"].is_number_unsigned()) r.config.seed = j["seed"].get<std::uint64_t>();
  if (j.contains("confidence") && j["confidence"].is_number()) {
    const double c = j["confidence"].get<double>();
    if (!(c > 0.0 && c < 1.0)) throw InputError(source + ": key 'confidence' must be in (0, 1)");
    r.config.confidence = c;
  }
  if (j.contains("snr_kind") && j["snr_kind"].is_string()) {
    r.config.snr_kind = j["snr_kind"] == "es_n0" ? SnrKind::es_n0 : SnrKind::eb_n0;
  }
  r.config.modulations.clear();
  r.config.snr_db.clear();
  if (j.contains("link") && j["link"].is_object() && j["link"].contains("code") && j["link"]["code"].is_string()) {
    r.config.link.code = j["link"]["code"].get<std::string>();
  }
  for (std::size_t i = 0; i < pts.size(); ++i) {
    const auto& p = pts[i];
    const std::string where = "points[" + std::to_string(i) + "].";
    PointSpec spec;
    const auto& mod = member(p, "modulation", source, where);
    if (!mod.is_string()) throw InputError(source + ": key '" + where + "modulation' must be a string");
    spec.modulation = mod.get<std::string>();
    try {
      (void)Constellation::from_name(spec.modulation);
    } catch (const ConfigError& e) {
      throw InputError(source + ": key '" + where + "modulation' = '" + spec.modulation + "' is not allowed; allowed: " +
                       e.allowed());
    }
    spec.eb_n0_db = real_of(p, "eb_n0_db", source, where);
    spec.es_n0_db = real_of(p, "es_n0_db", source, where);
    PointState st;
    auto& c = st.totals.counts;
    c.bits = count_of(p, "bits", source, where);
    c.bit_errors = count_of(p, "bit_errors", source, where);
    c.symbols = count_of(p, "symbols", source, where);
    c.symbol_errors = count_of(p, "symbol_errors", source, where);
    c.frames = p.contains("frames") ? count_of(p, "frames", source, where) : 0;
    c.frame_errors = p.contains("frame_errors") ? count_of(p, "frame_errors", source, where) : 0;
    if (c.bits == 0) throw InputError(source + ": key '" + where + "bits' must be at least 1");
    if (c.bit_errors > c.bits) throw InputError(source + ": key '" + where + "bit_errors' exceeds 'bits'");
    if (c.symbol_errors > c.symbols) throw InputError(source + ": key '" + where + "symbol_errors' exceeds 'symbols'");
    if (c.frame_errors > c.frames) throw InputError(source + ": key '" + where + "frame_errors' exceeds 'frames'");
    st.done = true;
    st.stop_reason = p.contains("stop_reason") && p["stop_reason"].is_string() ? p["stop_reason"].get<std::string>() : "";
    PointResult pr = make_point_result(spec, st, r.config.confidence);
    if (p.contains("code")) {
      const auto& code = p["code"];
      if (!code.is_string()) throw InputError(source + ": key '" + where + "code' must be a string");
      pr.code = code.get<std::string>();
      pr.code_rate = real_of(p, "code_rate", source, where);
      if (!(pr.code_rate > 0.0 && pr.code_rate <= 1.0)) {
        throw InputError(source + ": key '" + where + "code_rate' must be in (0, 1]");
      }
      pr.ber_theory = pr.ser_theory = std::numeric_limits<double>::quiet_NaN();  // no coded reference
    }
    if (p.contains("evm_rms_pct") && p["evm_rms_pct"].is_number()) {
      // Keep the recorded EVM (the error sums are not stored in the file).
      const double e = p["evm_rms_pct"].get<double>() / 100.0;
      pr.evm.count = c.symbols;
      pr.evm.reference_power = static_cast<double>(c.symbols);
      pr.evm.error_power = e * e * static_cast<double>(c.symbols);
    }
    r.points.push_back(std::move(pr));
  }
  r.complete = !j.contains("complete") || !j["complete"].is_boolean() || j["complete"].get<bool>();
  return r;
}

}  // namespace qamsight
