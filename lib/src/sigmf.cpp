// sigmf: SigMF and raw IQ readers, the streaming SigMF writer, and IQ sample conversion.
#include "qamsight/sigmf.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <bit>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <nlohmann/json.hpp>
#include <random>

#include "qamsight/io.hpp"

namespace qamsight {

using nlohmann::ordered_json;

namespace {

constexpr double kMaxSampleRate = 1e12;

bool ends_with(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

std::string base_name(const std::string& name) {
  for (const char* suffix : {".sigmf-meta", ".sigmf-data", ".sigmf"}) {
    if (ends_with(name, suffix)) return name.substr(0, name.size() - std::strlen(suffix));
  }
  return name;
}

// Byte-order helpers: components are read into host order.
template <class U>
U load(const std::uint8_t* p, bool big_endian) noexcept {
  U v;
  std::memcpy(&v, p, sizeof(U));
  const bool swap = (std::endian::native == std::endian::little) == big_endian;
  if (swap && sizeof(U) > 1) {
    std::uint8_t b[sizeof(U)];
    std::memcpy(b, &v, sizeof(U));
    std::reverse(b, b + sizeof(U));
    std::memcpy(&v, b, sizeof(U));
  }
  return v;
}

template <class U>
void store(std::uint8_t* p, U v, bool big_endian) noexcept {
  const bool swap = (std::endian::native == std::endian::little) == big_endian;
  std::memcpy(p, &v, sizeof(U));
  if (swap && sizeof(U) > 1) std::reverse(p, p + sizeof(U));
}

double decode_component(const std::uint8_t* p, const IqDatatype& t, double scale, double offset) noexcept {
  switch (t.number) {
    case IqNumber::floating:
      if (t.bits == 32) return static_cast<double>(std::bit_cast<float>(load<std::uint32_t>(p, t.big_endian)));
      return std::bit_cast<double>(load<std::uint64_t>(p, t.big_endian));
    case IqNumber::signed_integer:
      switch (t.bits) {
        case 8:
          return static_cast<double>(static_cast<std::int8_t>(p[0])) * scale;
        case 16:
          return static_cast<double>(static_cast<std::int16_t>(load<std::uint16_t>(p, t.big_endian))) * scale;
        default:
          return static_cast<double>(static_cast<std::int32_t>(load<std::uint32_t>(p, t.big_endian))) * scale;
      }
    case IqNumber::unsigned_integer:
      switch (t.bits) {
        case 8:
          return (static_cast<double>(p[0]) - offset) * scale;
        case 16:
          return (static_cast<double>(load<std::uint16_t>(p, t.big_endian)) - offset) * scale;
        default:
          return (static_cast<double>(load<std::uint32_t>(p, t.big_endian)) - offset) * scale;
      }
  }
  return 0.0;
}

// Encodes one component; returns true if it was clipped.
bool encode_component(double x, std::uint8_t* p, const IqDatatype& t, double inv_scale, double offset) noexcept {
  if (t.number == IqNumber::floating) {
    if (t.bits == 32) {
      store<std::uint32_t>(p, std::bit_cast<std::uint32_t>(static_cast<float>(x)), t.big_endian);
    } else {
      store<std::uint64_t>(p, std::bit_cast<std::uint64_t>(x), t.big_endian);
    }
    return false;
  }
  const double half = std::ldexp(1.0, static_cast<int>(t.bits) - 1);
  double lo, hi, code;
  if (t.number == IqNumber::signed_integer) {
    lo = -(half - 1.0);
    hi = half - 1.0;
    code = std::nearbyint(x * inv_scale);
  } else {
    lo = 0.0;
    hi = 2.0 * half - 1.0;
    code = std::nearbyint(x * inv_scale + offset);
  }
  bool clipped = false;
  if (!(code >= lo)) {  // also NaN
    code = std::isnan(code) ? (t.number == IqNumber::signed_integer ? 0.0 : std::floor(offset)) : lo;
    clipped = true;
  } else if (code > hi) {
    code = hi;
    clipped = true;
  }
  switch (t.bits) {
    case 8:
      p[0] = t.number == IqNumber::signed_integer
                 ? static_cast<std::uint8_t>(static_cast<std::int8_t>(code))
                 : static_cast<std::uint8_t>(code);
      break;
    case 16:
      store<std::uint16_t>(p,
                           t.number == IqNumber::signed_integer
                               ? static_cast<std::uint16_t>(static_cast<std::int16_t>(code))
                               : static_cast<std::uint16_t>(code),
                           t.big_endian);
      break;
    default:
      store<std::uint32_t>(p,
                           t.number == IqNumber::signed_integer
                               ? static_cast<std::uint32_t>(static_cast<std::int32_t>(code))
                               : static_cast<std::uint32_t>(code),
                           t.big_endian);
      break;
  }
  return clipped;
}

// Scale (full scale per code) and unsigned offset of a datatype.
void integer_scaling(const IqDatatype& t, double full_scale, double& scale, double& offset) noexcept {
  const double half = std::ldexp(1.0, static_cast<int>(t.bits) - 1);
  scale = full_scale / half;
  offset = (2.0 * half - 1.0) / 2.0;
}

// ---------------------------------------------------------------------------------------------
// Reading.

std::uint64_t file_size_or_throw(const std::string& path, const std::string& what) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw InputError(what + " '" + path + "': no such file");
  if (std::filesystem::is_directory(path, ec)) throw InputError(what + " '" + path + "': is a directory");
  const auto size = std::filesystem::file_size(path, ec);
  if (ec) throw InputError(what + " '" + path + "': " + ec.message());
  return size;
}

// Reads `samples` samples of bytes at `offset` in chunks into out[first ...].
void read_samples(const std::string& path, std::uint64_t offset, std::uint64_t samples, const IqDatatype& t,
                  double full_scale, std::vector<cf32>& out, const std::string& what) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(what + " '" + path + "': " + std::strerror(errno));
  in.seekg(static_cast<std::streamoff>(offset));
  const std::size_t bytes_per = t.sample_bytes();
  const std::uint64_t chunk = 1 << 16;
  std::vector<std::uint8_t> buf(chunk * bytes_per);
  std::uint64_t done = 0;
  const std::size_t first = out.size();
  out.resize(first + samples);
  while (done < samples) {
    const std::uint64_t n = std::min(chunk, samples - done);
    in.read(reinterpret_cast<char*>(buf.data()), static_cast<std::streamsize>(n * bytes_per));
    if (static_cast<std::uint64_t>(in.gcount()) != n * bytes_per) {
      throw InputError(what + " '" + path + "': short read");
    }
    decode_iq(std::span<const std::uint8_t>(buf.data(), n * bytes_per), t, full_scale,
              std::span<cf32>(out.data() + first + done, n));
    done += n;
  }
}

[[noreturn]] void key_error(const std::string& file, const std::string& key, const std::string& problem) {
  throw InputError("SigMF metadata '" + file + "': key " + key + " " + problem);
}

std::string json_text(const ordered_json& v) {
  std::string s = v.dump();
  if (s.size() > 60) s = s.substr(0, 57) + "...";
  return s;
}

// A non-negative integer (JSON integer, or a float with an integral value).
std::uint64_t read_index(const ordered_json& v, const std::string& file, const std::string& key) {
  if (v.is_number_unsigned()) return v.get<std::uint64_t>();
  if (v.is_number_integer()) {
    const auto i = v.get<std::int64_t>();
    if (i < 0) key_error(file, key, "= " + std::to_string(i) + " is negative; allowed: a sample index >= 0");
    return static_cast<std::uint64_t>(i);
  }
  if (v.is_number_float()) {
    const double d = v.get<double>();
    if (d < 0) key_error(file, key, "= " + format_number(d) + " is negative; allowed: a sample index >= 0");
    if (std::floor(d) == d && d < 9.0e15) return static_cast<std::uint64_t>(d);
  }
  key_error(file, key, "= " + json_text(v) + " is not allowed; allowed: a non-negative integer");
}

std::string read_string(const ordered_json& obj, const char* key, const std::string& file, const std::string& where) {
  const auto it = obj.find(key);
  if (it == obj.end()) return {};
  if (!it->is_string()) key_error(file, where + key, "= " + json_text(*it) + " is not a string");
  return it->get<std::string>();
}

double read_number(const ordered_json& obj, const char* key, const std::string& file, const std::string& where,
                   double fallback) {
  const auto it = obj.find(key);
  if (it == obj.end()) return fallback;
  if (!it->is_number()) key_error(file, where + key, "= " + json_text(*it) + " is not a number");
  return it->get<double>();
}

void check_sample_rate(double fs, const std::string& file, const std::string& key) {
  if (!(fs > 0.0 && fs <= kMaxSampleRate)) {
    key_error(file, key, "= " + format_number(fs) + " is not allowed; allowed: 0 < sample rate <= 1e12 Hz");
  }
}

}  // namespace

// ---------------------------------------------------------------------------------------------

std::string IqDatatype::name() const {
  std::string s = "c";
  s += number == IqNumber::floating ? 'f' : (number == IqNumber::signed_integer ? 'i' : 'u');
  s += std::to_string(bits);
  if (bits > 8) s += big_endian ? "_be" : "_le";
  return s;
}

std::optional<IqDatatype> parse_iq_datatype(std::string_view name) {
  for (IqNumber number : {IqNumber::floating, IqNumber::signed_integer, IqNumber::unsigned_integer}) {
    for (unsigned bits : {8u, 16u, 32u, 64u}) {
      if (number == IqNumber::floating && bits < 32) continue;
      if (number != IqNumber::floating && bits > 32) continue;
      for (bool be : {false, true}) {
        if (bits == 8 && be) continue;
        const IqDatatype t{number, bits, be};
        if (t.name() == name) return t;
      }
    }
  }
  return std::nullopt;
}

std::string iq_datatype_names() {
  return "cf32_le, cf32_be, cf64_le, cf64_be, ci32_le, ci32_be, ci16_le, ci16_be, ci8, cu32_le, cu32_be, "
         "cu16_le, cu16_be, cu8";
}

void decode_iq(std::span<const std::uint8_t> bytes, const IqDatatype& t, double full_scale,
               std::span<cf32> out) noexcept {
  const std::size_t per = t.sample_bytes();
  QAMSIGHT_ASSERT(bytes.size() % per == 0 && bytes.size() / per == out.size(), "decode_iq: sizes");
  double scale = 1.0, offset = 0.0;
  if (t.number != IqNumber::floating) integer_scaling(t, full_scale, scale, offset);
  const std::size_t half = per / 2;
  for (std::size_t i = 0; i < out.size(); ++i) {
    const std::uint8_t* p = bytes.data() + i * per;
    out[i] = cf32(static_cast<float>(decode_component(p, t, scale, offset)),
                  static_cast<float>(decode_component(p + half, t, scale, offset)));
  }
}

std::uint64_t encode_iq(std::span<const cf32> samples, const IqDatatype& t, double full_scale,
                        std::span<std::uint8_t> out) noexcept {
  const std::size_t per = t.sample_bytes();
  QAMSIGHT_ASSERT(out.size() == samples.size() * per, "encode_iq: sizes");
  double scale = 1.0, offset = 0.0;
  if (t.number != IqNumber::floating) integer_scaling(t, full_scale, scale, offset);
  const double inv = 1.0 / scale;
  const std::size_t half = per / 2;
  std::uint64_t clipped = 0;
  for (std::size_t i = 0; i < samples.size(); ++i) {
    std::uint8_t* p = out.data() + i * per;
    clipped += encode_component(samples[i].real(), p, t, inv, offset);
    clipped += encode_component(samples[i].imag(), p + half, t, inv, offset);
  }
  return clipped;
}

std::string sigmf_meta_path(const std::string& name) { return base_name(name) + ".sigmf-meta"; }
std::string sigmf_data_path(const std::string& name) { return base_name(name) + ".sigmf-data"; }

Recording read_sigmf(const std::string& name, const RecordingReadOptions& options) {
  Recording r;
  const std::string meta = sigmf_meta_path(name);
  r.source = meta;
  const std::string text = read_text_file(meta, "SigMF metadata");
  ordered_json doc;
  try {
    doc = ordered_json::parse(text);
  } catch (const ordered_json::exception& e) {
    throw InputError("SigMF metadata '" + meta + "': malformed JSON (" + e.what() + ")");
  }
  if (!doc.is_object()) throw InputError("SigMF metadata '" + meta + "': the document is not a JSON object");
  const auto g = doc.find("global");
  if (g == doc.end()) key_error(meta, "global", "is missing");
  if (!g->is_object()) key_error(meta, "global", "is not an object");
  r.global_json = g->dump();

  // Datatype.
  const auto dt = g->find("core:datatype");
  if (dt == g->end()) key_error(meta, "global.core:datatype", "is missing; allowed: " + iq_datatype_names());
  if (!dt->is_string()) key_error(meta, "global.core:datatype", "= " + json_text(*dt) + " is not a string");
  const auto parsed = parse_iq_datatype(dt->get<std::string>());
  if (!parsed) {
    key_error(meta, "global.core:datatype",
              "= '" + dt->get<std::string>() + "' is not a supported complex datatype; allowed: " +
                  iq_datatype_names());
  }
  r.datatype = *parsed;

  // Sample rate: optional in SigMF, required here (every analysis needs it).
  const auto fs = g->find("core:sample_rate");
  if (fs == g->end()) key_error(meta, "global.core:sample_rate", "is missing (the analysis needs the sample rate)");
  if (!fs->is_number()) key_error(meta, "global.core:sample_rate", "= " + json_text(*fs) + " is not a number");
  r.sample_rate_hz = fs->get<double>();
  check_sample_rate(r.sample_rate_hz, meta, "global.core:sample_rate");

  r.version = read_string(*g, "core:version", meta, "global.");
  r.description = read_string(*g, "core:description", meta, "global.");
  r.author = read_string(*g, "core:author", meta, "global.");
  r.full_scale = read_number(*g, "qamsight:full_scale", meta, "global.", 1.0);
  if (!(r.full_scale > 0.0 && std::isfinite(r.full_scale))) {
    key_error(meta, "global.qamsight:full_scale",
              "= " + format_number(r.full_scale) + " is not allowed; allowed: a finite value > 0");
  }

  // Data file.
  std::string data = sigmf_data_path(name);
  const std::string dataset = read_string(*g, "core:dataset", meta, "global.");
  if (!dataset.empty()) {
    const std::filesystem::path dir = std::filesystem::path(meta).parent_path();
    data = (dir / dataset).string();
  }
  r.data_path = data;
  const std::string what = "SigMF data file";
  std::uint64_t bytes;
  try {
    bytes = file_size_or_throw(data, what);
  } catch (const InputError& e) {
    throw InputError(std::string(e.what()) + " (for metadata '" + meta + "')");
  }

  // Captures.
  const auto caps = doc.find("captures");
  if (caps != doc.end()) {
    if (!caps->is_array()) key_error(meta, "captures", "is not an array");
    for (std::size_t i = 0; i < caps->size(); ++i) {
      const auto& c = (*caps)[i];
      const std::string where = "captures[" + std::to_string(i) + "].";
      if (!c.is_object()) key_error(meta, "captures[" + std::to_string(i) + "]", "is not an object");
      SigmfCapture cap;
      const auto ss = c.find("core:sample_start");
      if (ss != c.end()) cap.sample_start = read_index(*ss, meta, where + "core:sample_start");
      cap.frequency_hz = read_number(c, "core:frequency", meta, where, std::nan(""));
      cap.datetime = read_string(c, "core:datetime", meta, where);
      const auto hb = c.find("core:header_bytes");
      if (hb != c.end()) cap.header_bytes = read_index(*hb, meta, where + "core:header_bytes");
      if (!r.captures.empty() && cap.sample_start < r.captures.back().sample_start) {
        key_error(meta, where + "core:sample_start",
                  "= " + std::to_string(cap.sample_start) + " is before the previous capture's (" +
                      std::to_string(r.captures.back().sample_start) + "); allowed: ascending order");
      }
      r.captures.push_back(cap);
    }
  }
  if (r.captures.empty()) r.captures.push_back(SigmfCapture{});
  r.center_frequency_hz = r.captures.front().frequency_hz;

  std::uint64_t headers = 0;
  for (const auto& c : r.captures) headers += c.header_bytes;
  if (headers > bytes) {
    key_error(meta, "captures[].core:header_bytes",
              "total " + std::to_string(headers) + " exceeds the data file's " + std::to_string(bytes) + " bytes");
  }
  const std::size_t per = r.datatype.sample_bytes();
  if ((bytes - headers) % per != 0) {
    throw InputError(what + " '" + data + "': size " + std::to_string(bytes - headers) +
                     " bytes is not a multiple of the " + std::to_string(per) + "-byte " + r.datatype.name() +
                     " sample (key global.core:datatype of '" + meta + "')");
  }
  const std::uint64_t total = (bytes - headers) / per;
  if (total == 0) throw InputError(what + " '" + data + "': no samples (for metadata '" + meta + "')");
  if (total > options.max_samples) {
    throw InputError(what + " '" + data + "': " + std::to_string(total) + " samples, more than the reader's limit of " +
                     std::to_string(options.max_samples));
  }
  for (std::size_t i = 0; i < r.captures.size(); ++i) {
    if (r.captures[i].sample_start >= total) {
      key_error(meta, "captures[" + std::to_string(i) + "].core:sample_start",
                "= " + std::to_string(r.captures[i].sample_start) + " is beyond the data (" + std::to_string(total) +
                    " samples)");
    }
  }

  // Annotations.
  const auto ann = doc.find("annotations");
  if (ann != doc.end()) {
    if (!ann->is_array()) key_error(meta, "annotations", "is not an array");
    for (std::size_t i = 0; i < ann->size(); ++i) {
      const auto& a = (*ann)[i];
      const std::string where = "annotations[" + std::to_string(i) + "].";
      if (!a.is_object()) key_error(meta, "annotations[" + std::to_string(i) + "]", "is not an object");
      SigmfAnnotation s;
      const auto ss = a.find("core:sample_start");
      if (ss == a.end()) key_error(meta, where + "core:sample_start", "is missing");
      s.sample_start = read_index(*ss, meta, where + "core:sample_start");
      const auto sc = a.find("core:sample_count");
      if (sc != a.end()) s.sample_count = read_index(*sc, meta, where + "core:sample_count");
      if (s.sample_start >= total) {
        key_error(meta, where + "core:sample_start",
                  "= " + std::to_string(s.sample_start) + " is beyond the data (" + std::to_string(total) + " samples)");
      }
      if (s.sample_count > total - s.sample_start) {
        key_error(meta, where + "core:sample_count",
                  "= " + std::to_string(s.sample_count) + " runs past the end of the data (" + std::to_string(total) +
                      " samples from " + std::to_string(s.sample_start) + ")");
      }
      s.label = read_string(a, "core:label", meta, where);
      s.comment = read_string(a, "core:comment", meta, where);
      r.annotations.push_back(std::move(s));
    }
  }

  // Samples: each capture's header bytes come right before its first sample.
  r.samples.reserve(total);
  std::uint64_t byte_offset = 0;
  for (std::size_t i = 0; i < r.captures.size(); ++i) {
    const std::uint64_t start = r.captures[i].sample_start;
    const std::uint64_t end = i + 1 < r.captures.size() ? r.captures[i + 1].sample_start : total;
    if (i == 0 && start > 0) {  // samples before the first capture belong to no capture but are data
      read_samples(data, byte_offset, start, r.datatype, r.full_scale, r.samples, what);
      byte_offset += start * per;
    }
    byte_offset += r.captures[i].header_bytes;
    read_samples(data, byte_offset, end - start, r.datatype, r.full_scale, r.samples, what);
    byte_offset += (end - start) * per;
  }
  return r;
}

Recording read_raw_iq(const std::string& path, const RawIqSpec& spec, const RecordingReadOptions& options) {
  const auto t = parse_iq_datatype(spec.datatype);
  if (!t) throw ConfigError("datatype", spec.datatype, iq_datatype_names());
  if (!(spec.sample_rate_hz > 0.0 && spec.sample_rate_hz <= kMaxSampleRate)) {
    throw ConfigError("sample_rate_hz", format_number(spec.sample_rate_hz), "0 < sample rate <= 1e12 Hz");
  }
  if (!(spec.full_scale > 0.0 && std::isfinite(spec.full_scale))) {
    throw ConfigError("full_scale", format_number(spec.full_scale), "a finite value > 0");
  }
  const std::string what = "raw IQ file";
  const std::uint64_t bytes = file_size_or_throw(path, what);
  if (spec.header_bytes > bytes) {
    throw InputError(what + " '" + path + "': header of " + std::to_string(spec.header_bytes) +
                     " bytes is longer than the file (" + std::to_string(bytes) + " bytes)");
  }
  const std::size_t per = t->sample_bytes();
  if ((bytes - spec.header_bytes) % per != 0) {
    throw InputError(what + " '" + path + "': size " + std::to_string(bytes - spec.header_bytes) +
                     " bytes is not a multiple of the " + std::to_string(per) + "-byte " + t->name() +
                     " sample (datatype)");
  }
  const std::uint64_t total = (bytes - spec.header_bytes) / per;
  if (total == 0) throw InputError(what + " '" + path + "': no samples");
  if (total > options.max_samples) {
    throw InputError(what + " '" + path + "': " + std::to_string(total) + " samples, more than the reader's limit of " +
                     std::to_string(options.max_samples));
  }
  Recording r;
  r.source = path;
  r.data_path = path;
  r.datatype = *t;
  r.sample_rate_hz = spec.sample_rate_hz;
  r.center_frequency_hz = spec.center_frequency_hz;
  r.full_scale = spec.full_scale;
  SigmfCapture cap;
  cap.frequency_hz = spec.center_frequency_hz;
  r.captures.push_back(cap);
  read_samples(path, spec.header_bytes, total, *t, spec.full_scale, r.samples, what);
  return r;
}

// ---------------------------------------------------------------------------------------------
// Writing.

SigmfWriter::SigmfWriter(const std::string& name, const SigmfWriteSpec& spec) : spec_(spec) {
  const auto t = parse_iq_datatype(spec.datatype);
  if (!t) throw ConfigError("datatype", spec.datatype, iq_datatype_names());
  datatype_ = *t;
  if (!(spec.sample_rate_hz > 0.0 && spec.sample_rate_hz <= kMaxSampleRate)) {
    throw ConfigError("sample_rate_hz", format_number(spec.sample_rate_hz), "0 < sample rate <= 1e12 Hz");
  }
  if (!std::isfinite(spec.center_frequency_hz)) {
    throw ConfigError("center_frequency_hz", format_number(spec.center_frequency_hz), "a finite frequency");
  }
  if (!(spec.full_scale > 0.0 && std::isfinite(spec.full_scale))) {
    throw ConfigError("full_scale", format_number(spec.full_scale), "a finite value > 0");
  }
  meta_path_ = sigmf_meta_path(name);
  data_path_ = sigmf_data_path(name);
  const std::filesystem::path target(data_path_);
  const std::filesystem::path dir = target.has_parent_path() ? target.parent_path() : std::filesystem::path(".");
  std::random_device rd;
  std::string tmp_name(1, '.');
  tmp_name.append(target.filename().string()).append(".tmp").append(std::to_string(rd() % 1000000u));
  temp_path_ = (dir / tmp_name).string();
  file_ = std::fopen(temp_path_.c_str(), "wb");
  if (!file_) throw InputError("cannot write '" + data_path_ + "': " + std::strerror(errno));
}

SigmfWriter::~SigmfWriter() {
  if (file_) std::fclose(file_);
  if (!finished_ && !temp_path_.empty()) std::remove(temp_path_.c_str());
}

void SigmfWriter::append(std::span<const cf32> samples) {
  QAMSIGHT_ASSERT(!finished_ && file_, "append after finish");
  const std::size_t chunk = 1 << 15;
  for (std::size_t done = 0; done < samples.size(); done += chunk) {
    const auto part = samples.subspan(done, std::min(chunk, samples.size() - done));
    buffer_.resize(part.size() * datatype_.sample_bytes());
    clipped_ += encode_iq(part, datatype_, spec_.full_scale, buffer_);
    if (std::fwrite(buffer_.data(), 1, buffer_.size(), file_) != buffer_.size()) {
      throw InputError("cannot write '" + data_path_ + "': " + std::strerror(errno));
    }
  }
  samples_ += samples.size();
}

void SigmfWriter::finish(const std::string& global_extension_json) {
  QAMSIGHT_ASSERT(!finished_ && file_, "finish twice");
  ordered_json ext = ordered_json::object();
  if (!global_extension_json.empty()) {
    try {
      ext = ordered_json::parse(global_extension_json);
    } catch (const ordered_json::exception&) {
      throw ConfigError("global_extension_json", global_extension_json.substr(0, 40), "a JSON object");
    }
    if (!ext.is_object()) throw ConfigError("global_extension_json", global_extension_json.substr(0, 40), "a JSON object");
  }
  ordered_json g = ordered_json::object();
  g["core:datatype"] = datatype_.name();
  g["core:sample_rate"] = spec_.sample_rate_hz;
  g["core:version"] = "1.0.0";
  if (!spec_.description.empty()) g["core:description"] = spec_.description;
  if (!spec_.author.empty()) g["core:author"] = spec_.author;
  g["core:recorder"] = std::string("qamsight ") + std::string(version());
  g["core:num_channels"] = 1;
  g["core:extensions"] = ordered_json::array(
      {ordered_json{{"name", "qamsight"}, {"version", std::string(version())}, {"optional", true}}});
  if (datatype_.number != IqNumber::floating) g["qamsight:full_scale"] = spec_.full_scale;
  for (auto it = ext.begin(); it != ext.end(); ++it) g[it.key()] = it.value();

  ordered_json cap = ordered_json::object();
  cap["core:sample_start"] = 0;
  cap["core:frequency"] = spec_.center_frequency_hz;
  if (!spec_.datetime.empty()) cap["core:datetime"] = spec_.datetime;
  ordered_json annotations = ordered_json::array();
  for (const auto& a : spec_.annotations) {
    ordered_json o = ordered_json::object();
    o["core:sample_start"] = a.sample_start;
    o["core:sample_count"] = a.sample_count;
    if (!a.label.empty()) o["core:label"] = a.label;
    if (!a.comment.empty()) o["core:comment"] = a.comment;
    annotations.push_back(std::move(o));
  }
  ordered_json doc = ordered_json::object();
  doc["global"] = std::move(g);
  doc["captures"] = ordered_json::array({cap});
  doc["annotations"] = std::move(annotations);

  // Data first (synced and renamed), then the metadata that describes it.
  if (std::fflush(file_) != 0 || ::fsync(::fileno(file_)) != 0) {
    throw InputError("cannot write '" + data_path_ + "': " + std::strerror(errno));
  }
  const int closed = std::fclose(file_);
  file_ = nullptr;
  if (closed != 0) throw InputError("cannot write '" + data_path_ + "': " + std::strerror(errno));
  if (std::rename(temp_path_.c_str(), data_path_.c_str()) != 0) {
    throw InputError("cannot write '" + data_path_ + "': " + std::strerror(errno));
  }
  finished_ = true;
  try {
    write_text_file_atomic(meta_path_, doc.dump(2) + "\n");
  } catch (...) {
    std::remove(data_path_.c_str());  // no data file without the metadata that describes it
    throw;
  }
}

void write_sigmf(const std::string& name, std::span<const cf32> samples, const SigmfWriteSpec& spec,
                 const std::string& global_extension_json) {
  SigmfWriter w(name, spec);
  w.append(samples);
  w.finish(global_extension_json);
}

}  // namespace qamsight
