// checkpoint: writing, reading and continuing the append-only progress file of a sweep.
#include "qamsight/checkpoint.hpp"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <array>
#include <cerrno>
#include <charconv>
#include <chrono>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <random>

#include "qamsight/io.hpp"
#include "sweep_settings.hpp"

namespace qamsight {

using nlohmann::ordered_json;

namespace {

constexpr const char* kFormat = "qamsight-checkpoint";
constexpr int kFormatVersion = 1;

// CRC-32 of IEEE 802.3 (reflected polynomial 0xEDB88320, initial and final value 0xFFFFFFFF);
// the catalogue check value of "123456789" is 0xCBF43926.
std::uint32_t crc32(std::string_view data) noexcept {
  static const std::array<std::uint32_t, 256> table = [] {
    std::array<std::uint32_t, 256> t{};
    for (std::uint32_t i = 0; i < 256; ++i) {
      std::uint32_t c = i;
      for (int k = 0; k < 8; ++k) c = (c & 1u) ? 0xEDB88320u ^ (c >> 1) : c >> 1;
      t[i] = c;
    }
    return t;
  }();
  std::uint32_t c = 0xFFFFFFFFu;
  for (unsigned char b : data) c = table[(c ^ b) & 0xFFu] ^ (c >> 8);
  return c ^ 0xFFFFFFFFu;
}

std::string hex_u64(std::uint64_t v, int digits) {
  static const char* d = "0123456789abcdef";
  std::string s(static_cast<std::size_t>(digits), '0');
  for (int i = digits - 1; i >= 0; --i, v >>= 4) s[static_cast<std::size_t>(i)] = d[v & 0xFu];
  return s;
}

bool parse_hex_u64(std::string_view s, std::uint64_t& out) {
  if (s.empty() || s.size() > 16) return false;
  const auto r = std::from_chars(s.data(), s.data() + s.size(), out, 16);
  return r.ec == std::errc() && r.ptr == s.data() + s.size();
}

// Doubles are stored as C99 hexadecimal floating point ("0x1.8p+3"): exact and readable.
std::string hex_double(double v) {
  char buf[64];
  const bool negative = std::signbit(v);
  const auto r = std::to_chars(buf, buf + sizeof buf, negative ? -v : v, std::chars_format::hex);
  return std::string(negative ? "-0x" : "0x") + std::string(buf, r.ptr);
}

bool parse_hex_double(std::string_view s, double& out) {
  bool negative = false;
  if (!s.empty() && s.front() == '-') negative = true, s.remove_prefix(1);
  if (s.size() < 3 || s[0] != '0' || (s[1] != 'x' && s[1] != 'X')) return false;
  s.remove_prefix(2);
  const auto r = std::from_chars(s.data(), s.data() + s.size(), out, std::chars_format::hex);
  if (r.ec != std::errc() || r.ptr != s.data() + s.size()) return false;
  if (negative) out = -out;
  return true;
}

std::string dump_canonical(const ordered_json& j) {
  return j.dump(-1, ' ', false, ordered_json::error_handler_t::replace);
}

std::string framed(const ordered_json& record) {
  const std::string body = dump_canonical(record);
  return hex_u64(crc32(body), 8) + " " + body + "\n";
}

bool valid_stop_reason(const std::string& s) {
  return s == "min_errors" || s == "min_frame_errors" || s == "max_bits" || s == "relative_width";
}

[[noreturn]] void fail(const std::string& source, std::size_t line, const std::string& problem) {
  throw InputError("checkpoint '" + source + "' line " + std::to_string(line) + ": " + problem);
}

const ordered_json& field(const ordered_json& j, const char* key, const std::string& source, std::size_t line) {
  const auto it = j.find(key);
  if (it == j.end()) fail(source, line, std::string("missing key '") + key + "'");
  return *it;
}

std::uint64_t count_field(const ordered_json& j, const char* key, const std::string& source, std::size_t line) {
  const auto& v = field(j, key, source, line);
  if (!v.is_number_unsigned()) fail(source, line, std::string("key '") + key + "' must be a non-negative integer");
  return v.get<std::uint64_t>();
}

double sum_field(const ordered_json& j, const char* key, const std::string& source, std::size_t line) {
  const auto& v = field(j, key, source, line);
  double x = 0.0;
  if (!v.is_string() || !parse_hex_double(v.get_ref<const std::string&>(), x) || !std::isfinite(x) || x < 0.0) {
    fail(source, line, std::string("key '") + key + "' must be a non-negative hexadecimal float such as \"0x1.8p+3\"");
  }
  return x;
}

ordered_json batch_record(std::size_t point, const PointState& s) {
  const auto& c = s.totals.counts;
  const auto& e = s.totals.evm;
  ordered_json j;
  j["record"] = "batch";
  j["point"] = point;
  j["next_frame"] = s.next_frame;
  j["bits"] = c.bits;
  j["bit_errors"] = c.bit_errors;
  j["symbols"] = c.symbols;
  j["symbol_errors"] = c.symbol_errors;
  j["frames"] = c.frames;
  j["frame_errors"] = c.frame_errors;
  j["evm_count"] = e.count;
  j["evm_error_power"] = hex_double(e.error_power);
  j["evm_reference_power"] = hex_double(e.reference_power);
  j["evm_peak_error_power"] = hex_double(e.peak_error_power);
  j["done"] = s.done;
  j["stop_reason"] = s.stop_reason;
  return j;
}

ordered_json header_record(const SweepConfig& config) {
  const std::string settings = checkpoint_settings(config);
  ordered_json j;
  j["record"] = "header";
  j["format"] = kFormat;
  j["format_version"] = kFormatVersion;
  j["program_version"] = std::string(version());
  j["points"] = sweep_points(config).size();
  j["fingerprint"] = hex_u64(checkpoint_fingerprint(settings), 16);
  j["settings"] = ordered_json::parse(settings);
  return j;
}

// Reads one framed line: checks the checksum and parses the JSON. Returns false for a damaged
// line (bad frame or checksum) so the caller can decide whether it is a torn tail.
bool unframe(std::string_view line, ordered_json& out) {
  if (line.size() < 10 || line[8] != ' ') return false;
  std::uint64_t crc = 0;
  if (!parse_hex_u64(line.substr(0, 8), crc)) return false;
  const std::string_view body = line.substr(9);
  if (crc32(body) != crc) return false;
  out = ordered_json::parse(body, nullptr, false);
  return !out.is_discarded() && out.is_object();
}

std::string errno_text(int e) { return std::strerror(e); }

double steady_seconds() {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

// Writes `content` to a fresh temporary file beside `path`, synced; returns its name.
std::string write_temporary(const std::string& path, const std::string& content) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  std::random_device rd;
  std::string name(1, '.');  // built stepwise: GCC 12 warns falsely on "." + string
  name.append(target.filename().string()).append(".tmp").append(hex_u64((std::uint64_t{rd()} << 32) ^ rd(), 16));
  const std::string tmp = (dir / name).string();
  const int fd = ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0644);
  if (fd < 0) throw InputError("checkpoint '" + path + "': cannot create a file beside it: " + errno_text(errno));
  std::size_t done = 0;
  while (done < content.size()) {
    const ssize_t w = ::write(fd, content.data() + done, content.size() - done);
    if (w < 0 && errno == EINTR) continue;
    if (w < 0) {
      const int e = errno;
      ::close(fd);
      ::unlink(tmp.c_str());
      throw InputError("checkpoint '" + path + "': cannot write: " + errno_text(e));
    }
    done += static_cast<std::size_t>(w);
  }
  if (::fsync(fd) != 0 || ::close(fd) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    throw InputError("checkpoint '" + path + "': cannot write: " + errno_text(e));
  }
  return tmp;
}

// Makes a rename or link durable: the directory entry itself is synced.
void sync_directory_of(const std::string& path) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const fs::path dir = target.has_parent_path() ? target.parent_path() : fs::path(".");
  const int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd >= 0) {
    (void)::fsync(fd);  // best effort: some file systems refuse fsync on directories
    ::close(fd);
  }
}

// Opens the checkpoint for appending and takes the lock that keeps a second sweep out.
int open_locked(const std::string& path, int flags) {
  const int fd = ::open(path.c_str(), flags | O_CLOEXEC);
  if (fd < 0) throw InputError("checkpoint '" + path + "': " + errno_text(errno));
  if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
    const int e = errno;
    ::close(fd);
    if (e == EWOULDBLOCK) throw InputError("checkpoint '" + path + "' is in use by another running sweep");
    throw InputError("checkpoint '" + path + "': cannot lock: " + errno_text(e));
  }
  return fd;
}

// Finds the first difference between two settings objects, as "key.path: a vs b".
bool first_difference(const ordered_json& a, const ordered_json& b, const std::string& path, std::string& out) {
  auto shown = [](const ordered_json* v) {
    if (!v) return std::string("absent");
    std::string s = dump_canonical(*v);
    return s.size() > 60 ? s.substr(0, 57) + "..." : s;
  };
  if (a.is_object() && b.is_object()) {
    for (auto it = a.begin(); it != a.end(); ++it) {
      const std::string p = path.empty() ? it.key() : path + "." + it.key();
      const auto jt = b.find(it.key());
      if (jt == b.end()) {
        out = p + " is " + shown(&*it) + " in the checkpoint and absent now";
        return true;
      }
      if (first_difference(*it, *jt, p, out)) return true;
    }
    for (auto jt = b.begin(); jt != b.end(); ++jt) {
      if (!a.contains(jt.key())) {
        out = (path.empty() ? jt.key() : path + "." + jt.key()) + " is absent in the checkpoint and " +
              shown(&*jt) + " now";
        return true;
      }
    }
    return false;
  }
  if (a != b) {
    out = (path.empty() ? std::string("settings") : path) + " is " + shown(&a) + " in the checkpoint and " +
          shown(&b) + " now";
    return true;
  }
  return false;
}

}  // namespace

std::string checkpoint_settings(const SweepConfig& config) {
  return dump_canonical(detail::sweep_settings_json(config));
}

std::uint64_t checkpoint_fingerprint(std::string_view settings) noexcept {
  std::uint64_t h = 0xcbf29ce484222325ull;  // FNV-1a 64 offset basis
  for (unsigned char c : settings) {
    h ^= c;
    h *= 0x100000001b3ull;  // FNV 64 prime
  }
  return h;
}

CheckpointContents parse_checkpoint(std::string_view text, const std::string& source) {
  CheckpointContents out;
  if (text.empty()) throw InputError("checkpoint '" + source + "': empty file, not a checkpoint");
  std::size_t pos = 0, line_no = 0;
  while (pos < text.size()) {
    const std::size_t nl = text.find('\n', pos);
    ++line_no;
    const bool complete = nl != std::string_view::npos;
    const std::string_view line = text.substr(pos, complete ? nl - pos : std::string_view::npos);
    const std::size_t next = complete ? nl + 1 : text.size();
    const bool last = next >= text.size();
    ordered_json rec;
    const bool ok = complete && unframe(line, rec);
    if (!ok) {
      if (line_no == 1) {
        fail(source, 1, "not a qamsight checkpoint (no valid header record)");
      }
      if (last) {  // a record cut short by a kill or a crash: ignore it, the one before counts
        out.torn_tail = true;
        break;
      }
      fail(source, line_no, "damaged record (checksum or framing does not match)");
    }
    const auto kind = rec.find("record");
    if (kind == rec.end() || !kind->is_string()) fail(source, line_no, "missing key 'record'");
    if (line_no == 1) {
      if (*kind != "header" || !rec.contains("format") || rec["format"] != kFormat) {
        fail(source, 1, "not a qamsight checkpoint (no valid header record)");
      }
      const auto& fv = field(rec, "format_version", source, 1);
      if (!fv.is_number_integer() || fv.get<std::int64_t>() != kFormatVersion) {
        fail(source, 1, "key 'format_version' = " + dump_canonical(fv) + " is not supported; allowed: " +
                            std::to_string(kFormatVersion));
      }
      const auto& pv = field(rec, "program_version", source, 1);
      if (!pv.is_string()) fail(source, 1, "key 'program_version' must be a string");
      out.program_version = pv.get<std::string>();
      const auto& settings = field(rec, "settings", source, 1);
      if (!settings.is_object()) fail(source, 1, "key 'settings' must be an object");
      out.settings = dump_canonical(settings);
      const auto& fp = field(rec, "fingerprint", source, 1);
      if (!fp.is_string() || !parse_hex_u64(fp.get_ref<const std::string&>(), out.fingerprint)) {
        fail(source, 1, "key 'fingerprint' must be 16 hexadecimal digits");
      }
      if (out.fingerprint != checkpoint_fingerprint(out.settings)) {
        fail(source, 1, "key 'fingerprint' does not match key 'settings' (the header was edited)");
      }
      const std::uint64_t n = count_field(rec, "points", source, 1);
      if (n < 1 || n > 100'000'000) fail(source, 1, "key 'points' = " + std::to_string(n) + " must be 1 to 1e8");
      out.points = static_cast<std::size_t>(n);
      out.states.assign(out.points, PointState{});
      out.recorded.assign(out.points, false);
    } else {
      if (*kind != "batch") fail(source, line_no, "key 'record' = " + dump_canonical(*kind) + "; allowed: \"batch\"");
      const std::uint64_t p = count_field(rec, "point", source, line_no);
      if (p >= out.points) {
        fail(source, line_no, "key 'point' = " + std::to_string(p) + " is not below the " +
                                  std::to_string(out.points) + " points of the header");
      }
      PointState s;
      s.next_frame = count_field(rec, "next_frame", source, line_no);
      auto& c = s.totals.counts;
      c.bits = count_field(rec, "bits", source, line_no);
      c.bit_errors = count_field(rec, "bit_errors", source, line_no);
      c.symbols = count_field(rec, "symbols", source, line_no);
      c.symbol_errors = count_field(rec, "symbol_errors", source, line_no);
      c.frames = count_field(rec, "frames", source, line_no);
      c.frame_errors = count_field(rec, "frame_errors", source, line_no);
      auto& e = s.totals.evm;
      e.count = count_field(rec, "evm_count", source, line_no);
      e.error_power = sum_field(rec, "evm_error_power", source, line_no);
      e.reference_power = sum_field(rec, "evm_reference_power", source, line_no);
      e.peak_error_power = sum_field(rec, "evm_peak_error_power", source, line_no);
      const auto& done = field(rec, "done", source, line_no);
      if (!done.is_boolean()) fail(source, line_no, "key 'done' must be true or false");
      s.done = done.get<bool>();
      const auto& reason = field(rec, "stop_reason", source, line_no);
      if (!reason.is_string()) fail(source, line_no, "key 'stop_reason' must be a string");
      s.stop_reason = reason.get<std::string>();
      if (s.done != valid_stop_reason(s.stop_reason)) {
        fail(source, line_no, "key 'stop_reason' = " + dump_canonical(reason) +
                                  (s.done ? " must be min_errors, min_frame_errors, max_bits or relative_width for a finished point"
                                          : " must be empty for an unfinished point"));
      }
      if (c.bit_errors > c.bits || c.symbol_errors > c.symbols || c.frame_errors > c.frames) {
        fail(source, line_no, "counts are inconsistent (more errors than bits, symbols or frames)");
      }
      if (c.frames != s.next_frame || s.next_frame == 0) {
        fail(source, line_no, "key 'frames' must equal key 'next_frame' and be at least 1");
      }
      const std::size_t i = static_cast<std::size_t>(p);
      if (out.recorded[i] && (out.states[i].done || s.next_frame <= out.states[i].next_frame)) {
        fail(source, line_no, "point " + std::to_string(p) + " goes backwards or continues after it finished");
      }
      out.states[i] = std::move(s);
      out.recorded[i] = true;
      ++out.records;
    }
    out.valid_bytes = next;
    pos = next;
  }
  return out;
}

void require_same_sweep(const CheckpointContents& contents, const SweepConfig& config, const std::string& source) {
  const std::string now = checkpoint_settings(config);
  if (contents.program_version != version()) {
    throw InputError("checkpoint '" + source + "' was written by qamsight " + contents.program_version +
                     ", this is " + std::string(version()) + "; counts may differ, start afresh");
  }
  if (contents.settings != now) {
    std::string diff = "the settings differ";
    (void)first_difference(ordered_json::parse(contents.settings), ordered_json::parse(now), "", diff);
    throw InputError("checkpoint '" + source + "' belongs to a different sweep: " + diff);
  }
  const std::size_t points = sweep_points(config).size();
  if (contents.points != points) {
    throw InputError("checkpoint '" + source + "' has " + std::to_string(contents.points) +
                     " points, this sweep has " + std::to_string(points));
  }
}

SweepCheckpoint::SweepCheckpoint(std::string path, int fd, std::vector<PointState> states, bool torn)
    : path_(std::move(path)), fd_(fd), states_(std::move(states)), torn_(torn) {}

SweepCheckpoint::SweepCheckpoint(SweepCheckpoint&& o) noexcept
    : path_(std::move(o.path_)),
      fd_(o.fd_),
      states_(std::move(o.states_)),
      torn_(o.torn_),
      sync_interval_s_(o.sync_interval_s_),
      last_sync_s_(o.last_sync_s_) {
  o.fd_ = -1;
}

SweepCheckpoint& SweepCheckpoint::operator=(SweepCheckpoint&& o) noexcept {
  if (this != &o) {
    if (fd_ >= 0) ::close(fd_);
    path_ = std::move(o.path_);
    fd_ = o.fd_;
    states_ = std::move(o.states_);
    torn_ = o.torn_;
    sync_interval_s_ = o.sync_interval_s_;
    last_sync_s_ = o.last_sync_s_;
    o.fd_ = -1;
  }
  return *this;
}

SweepCheckpoint::~SweepCheckpoint() {
  if (fd_ >= 0) ::close(fd_);
}

std::size_t SweepCheckpoint::points_done() const noexcept {
  std::size_t n = 0;
  for (const auto& s : states_) n += s.done;
  return n;
}

SweepCheckpoint SweepCheckpoint::start(const std::string& path, const SweepConfig& config) {
  const std::string header = framed(header_record(config));
  const std::size_t points = sweep_points(config).size();
  struct stat st {};
  if (::stat(path.c_str(), &st) == 0) {
    throw InputError("checkpoint '" + path +
                     "' already exists: add --resume to continue it, or remove it to start afresh");
  }
  const std::string tmp = write_temporary(path, header);
  // link() refuses an existing name, so two sweeps started at once cannot both own the file.
  if (::link(tmp.c_str(), path.c_str()) != 0) {
    const int e = errno;
    ::unlink(tmp.c_str());
    if (e == EEXIST) {
      throw InputError("checkpoint '" + path +
                       "' already exists: add --resume to continue it, or remove it to start afresh");
    }
    throw InputError("checkpoint '" + path + "': cannot create: " + errno_text(e));
  }
  ::unlink(tmp.c_str());
  sync_directory_of(path);
  const int fd = open_locked(path, O_WRONLY | O_APPEND);
  return SweepCheckpoint(path, fd, std::vector<PointState>(points), false);
}

SweepCheckpoint SweepCheckpoint::resume(const std::string& path, const SweepConfig& config) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) throw InputError("checkpoint '" + path + "': is a directory");
  const int old_fd = open_locked(path, O_RDONLY);
  std::string text;
  {
    char buf[65536];
    for (;;) {
      const ssize_t r = ::read(old_fd, buf, sizeof buf);
      if (r < 0 && errno == EINTR) continue;
      if (r < 0) {
        const int e = errno;
        ::close(old_fd);
        throw InputError("checkpoint '" + path + "': " + errno_text(e));
      }
      if (r == 0) break;
      text.append(buf, static_cast<std::size_t>(r));
    }
  }
  CheckpointContents contents;
  try {
    contents = parse_checkpoint(text, path);
    require_same_sweep(contents, config, path);
  } catch (...) {
    ::close(old_fd);
    throw;
  }
  // Rewrite it compactly (header plus the latest record of each point), which also drops a
  // torn tail, and replace the old file atomically; then append to the new one.
  std::string compact = text.substr(0, text.find('\n') + 1);
  for (std::size_t p = 0; p < contents.points; ++p) {
    if (contents.recorded[p]) compact += framed(batch_record(p, contents.states[p]));
  }
  int fd = -1;
  try {
    const std::string tmp = write_temporary(path, compact);
    if (::rename(tmp.c_str(), path.c_str()) != 0) {
      const int e = errno;
      ::unlink(tmp.c_str());
      throw InputError("checkpoint '" + path + "': cannot replace: " + errno_text(e));
    }
    sync_directory_of(path);
    fd = open_locked(path, O_WRONLY | O_APPEND);
  } catch (...) {
    ::close(old_fd);
    throw;
  }
  ::close(old_fd);
  return SweepCheckpoint(path, fd, std::move(contents.states), contents.torn_tail);
}

void SweepCheckpoint::record(std::size_t point, const PointState& state) {
  QAMSIGHT_ASSERT(fd_ >= 0, "checkpoint used after it was moved from");
  const std::string line = framed(batch_record(point, state));
  std::size_t done = 0;
  while (done < line.size()) {
    const ssize_t w = ::write(fd_, line.data() + done, line.size() - done);
    if (w < 0 && errno == EINTR) continue;
    if (w < 0) throw InputError("checkpoint '" + path_ + "': cannot append a record: " + errno_text(errno));
    done += static_cast<std::size_t>(w);
  }
  const double now = steady_seconds();
  if (state.done || sync_interval_s_ <= 0.0 || now - last_sync_s_ >= sync_interval_s_) {
    while (::fdatasync(fd_) != 0) {
      if (errno != EINTR) throw InputError("checkpoint '" + path_ + "': cannot sync: " + errno_text(errno));
    }
    last_sync_s_ = now;
  }
  if (point < states_.size()) states_[point] = state;
}

void SweepCheckpoint::set_sync_interval(double seconds) {
  require_range("checkpoint sync_interval", seconds, 0.0, 3600.0);
  sync_interval_s_ = seconds;
}

void SweepCheckpoint::attach(SweepHooks& hooks) {
  hooks.resume = states_;
  hooks.on_batch = [this](std::size_t point, const PointSpec&, const PointState& state) { record(point, state); };
}

}  // namespace qamsight
