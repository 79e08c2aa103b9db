// sigmf: IQ recordings in and out: SigMF (.sigmf-meta + .sigmf-data) and raw interleaved IQ files.
#pragma once

#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <optional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "qamsight/core.hpp"

// SigMF (the Signal Metadata Format, an open specification; field names below as in its core
// namespace, version 1.x, from memory): a recording is a pair of files, NAME.sigmf-data with the
// samples and NAME.sigmf-meta, a JSON object with
//   "global":      core:datatype, core:sample_rate, core:version (required by the spec),
//                  core:description, core:author, core:extensions, ... and namespaced keys
//                  of extensions ("qamsight:..." for ours),
//   "captures":    segments of the data, each with core:sample_start and optionally
//                  core:frequency (centre frequency, Hz), core:datetime, core:header_bytes,
//   "annotations": core:sample_start, core:sample_count, core:label, core:comment, ...
// Samples are interleaved I, Q. Datatype names: c (complex) + f/i/u (float, signed, unsigned
// integer) + bits per component + _le/_be (byte order; none for 8-bit types).

namespace qamsight {

enum class IqNumber { floating, signed_integer, unsigned_integer };

/// A complex sample format.
struct IqDatatype {
  IqNumber number = IqNumber::floating;
  unsigned bits = 32;       ///< per component: 8, 16 or 32 (integers), 32 or 64 (floats)
  bool big_endian = false;  ///< ignored for 8-bit types

  std::size_t sample_bytes() const noexcept { return 2u * bits / 8u; }
  /// SigMF name: "cf32_le", "ci16_le", "ci8", "cu8", ...
  std::string name() const;
  friend bool operator==(const IqDatatype&, const IqDatatype&) = default;
};

/// Parses a complex SigMF datatype: cf32_le, cf32_be, cf64_le, cf64_be, ci32_le, ci32_be,
/// ci16_le, ci16_be, ci8, cu32_le, cu32_be, cu16_le, cu16_be, cu8. Empty for anything else
/// (real-valued "r..." types included: the analyses need complex baseband).
std::optional<IqDatatype> parse_iq_datatype(std::string_view name);
/// The accepted names, comma separated (for messages and help).
std::string iq_datatype_names();

/// Integer sample scaling, both directions: a component c of a b-bit signed type stands for
///   x = c * full_scale / 2^(b-1),
/// of an unsigned type for x = (c - (2^b - 1) / 2) * full_scale / 2^(b-1) (the centre of the code
/// range as zero, the usual convention of 8-bit receivers; common practice). Writing rounds to
/// the nearest code and clips symmetrically to +-(2^(b-1) - 1) codes (signed) or to the code
/// range (unsigned). Floats are stored as they are (full_scale is not applied to them).
/// full_scale is recorded in the metadata as "qamsight:full_scale" and read back from it (1
/// when absent, i.e. the integer full scale reads as amplitude 1).

/// One entry of the captures array.
struct SigmfCapture {
  std::uint64_t sample_start = 0;
  double frequency_hz = std::nan("");  ///< core:frequency; NaN if absent
  std::string datetime;                ///< core:datetime; empty if absent
  std::uint64_t header_bytes = 0;      ///< core:header_bytes (bytes before this capture's samples)
};

/// One entry of the annotations array.
struct SigmfAnnotation {
  std::uint64_t sample_start = 0;
  std::uint64_t sample_count = 0;  ///< 0 if absent
  std::string label;               ///< core:label
  std::string comment;             ///< core:comment
};

/// A recording in memory: samples as cf32 (integer types scaled as above) and its metadata.
struct Recording {
  std::string source;     ///< the metadata file, or the raw file for a raw recording
  std::string data_path;  ///< the file the samples came from
  IqDatatype datatype;
  double sample_rate_hz = 0.0;
  double center_frequency_hz = std::nan("");  ///< first capture's core:frequency; NaN if unknown
  double full_scale = 1.0;
  std::string version, description, author;
  std::vector<SigmfCapture> captures;
  std::vector<SigmfAnnotation> annotations;
  /// The "global" object as compact JSON text (raw recordings: "{}"), so that extension keys
  /// can be read by the modules that define them.
  std::string global_json = "{}";
  std::vector<cf32> samples;
};

/// Limits of the readers.
struct RecordingReadOptions {
  std::uint64_t max_samples = std::uint64_t{1} << 27;  ///< more: InputError (1 GiB of cf32)
};

/// The metadata path for a name given as NAME, NAME.sigmf-meta, NAME.sigmf-data or NAME.sigmf.
std::string sigmf_meta_path(const std::string& name);
/// The data path for the same names.
std::string sigmf_data_path(const std::string& name);

/// Reads a SigMF recording (`name` as for sigmf_meta_path). The data file is NAME.sigmf-data,
/// or the file named by the global core:dataset key (relative to the metadata's folder). Throws
/// InputError, naming the file and the key, for: an unreadable metadata or data file, malformed
/// JSON, a missing or non-object "global", a missing, non-string or unknown core:datatype, a
/// missing, non-numeric or absurd core:sample_rate (allowed 0 < fs <= 1e12 Hz), captures or
/// annotations that are not arrays of objects, a sample_start that is negative, not an integer,
/// beyond the data or (captures) out of order, an annotation running past the end, a
/// core:header_bytes that does not fit, a data size that is not a whole number of samples, an
/// empty data file, and more than max_samples samples.
Recording read_sigmf(const std::string& name, const RecordingReadOptions& options = {});

/// A raw file of interleaved IQ samples without metadata: everything comes from the caller.
struct RawIqSpec {
  std::string datatype = "ci16_le";     ///< a SigMF complex datatype name
  double sample_rate_hz = 0.0;          ///< 0 < fs <= 1e12
  double center_frequency_hz = std::nan("");
  double full_scale = 1.0;              ///< integer types only; > 0
  std::uint64_t header_bytes = 0;       ///< bytes to skip at the start of the file
};
/// Reads a raw IQ file. Throws ConfigError for a bad datatype, sample rate or full scale
/// (parameters "datatype", "sample_rate_hz", "full_scale") and InputError for the file (missing,
/// empty, not a whole number of samples, too large).
Recording read_raw_iq(const std::string& path, const RawIqSpec& spec,
                      const RecordingReadOptions& options = {});

/// Converts interleaved bytes of `datatype` to samples (count = bytes / sample_bytes, which must
/// divide exactly; asserted). Exposed for tests and other readers.
void decode_iq(std::span<const std::uint8_t> bytes, const IqDatatype& datatype, double full_scale,
               std::span<cf32> out) noexcept;
/// Samples to bytes; returns the number of clipped components (integer types).
std::uint64_t encode_iq(std::span<const cf32> samples, const IqDatatype& datatype, double full_scale,
                        std::span<std::uint8_t> out) noexcept;

/// What a SigmfWriter writes besides the samples.
struct SigmfWriteSpec {
  std::string datatype = "cf32_le";  ///< any datatype of parse_iq_datatype()
  double sample_rate_hz = 1.0;       ///< 0 < fs <= 1e12
  double center_frequency_hz = 0.0;  ///< core:frequency of the single capture
  double full_scale = 1.0;           ///< integer types; > 0; written as qamsight:full_scale
  std::string description;
  std::string author;                ///< core:author; omitted when empty
  std::string datetime;              ///< core:datetime of the capture (ISO 8601); omitted when empty
  std::vector<SigmfAnnotation> annotations;
};

/// Writes a SigMF recording NAME.sigmf-data + NAME.sigmf-meta in a streaming way: samples are
/// appended to a temporary data file; finish() syncs it, renames it to NAME.sigmf-data and then
/// writes the metadata atomically (so the metadata never names missing samples). A writer
/// destroyed without finish() removes its temporary file and leaves no output.
/// core:version is "1.0.0"; core:extensions declares the "qamsight" namespace (optional).
class SigmfWriter {
 public:
  /// Throws ConfigError for a bad spec and InputError if the data file cannot be created.
  SigmfWriter(const std::string& name, const SigmfWriteSpec& spec);
  ~SigmfWriter();
  SigmfWriter(const SigmfWriter&) = delete;
  SigmfWriter& operator=(const SigmfWriter&) = delete;

  /// Appends samples (converted to the datatype). Throws InputError on a write failure.
  void append(std::span<const cf32> samples);
  std::uint64_t samples_written() const noexcept { return samples_; }
  /// Integer components clipped so far.
  std::uint64_t clipped_components() const noexcept { return clipped_; }
  /// Completes the recording. `global_extension_json` is a JSON object (text) whose members are
  /// added to "global" (use namespaced keys, e.g. "qamsight:..."); "" for none. Throws
  /// InputError on failure, ConfigError for extension text that is not a JSON object.
  void finish(const std::string& global_extension_json = "");
  const std::string& meta_path() const noexcept { return meta_path_; }
  const std::string& data_path() const noexcept { return data_path_; }

 private:
  SigmfWriteSpec spec_;
  IqDatatype datatype_;
  std::string meta_path_, data_path_, temp_path_;
  std::FILE* file_ = nullptr;
  std::vector<std::uint8_t> buffer_;
  std::uint64_t samples_ = 0, clipped_ = 0;
  bool finished_ = false;
};

/// Writes a whole recording at once (SigmfWriter, one append, finish).
void write_sigmf(const std::string& name, std::span<const cf32> samples, const SigmfWriteSpec& spec,
                 const std::string& global_extension_json = "");

}  // namespace qamsight
